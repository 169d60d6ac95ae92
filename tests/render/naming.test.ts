// Output names of pack items. Portable means the POSIX portable filename
// character set (IEEE Std 1003.1, Base Definitions 3.282: A–Z a–z 0–9 . _ -),
// without the '.', which only separates the extension; no name Windows reserves
// for devices (CON, PRN, AUX, NUL, COM1–9, LPT1–9, with any extension: Windows
// file naming rules, common practice); unique regardless of case, because the
// common desktop file systems ignore case (common practice); at most 80
// characters before ".wav" (the product's limit).
import fc from 'fast-check'
import { describe, expect, it } from 'vitest'
import { DEFAULT_NAMING_TEMPLATE } from '@shared/schemas/packs'
import {
  buildFileName,
  fillTemplate,
  outputNames,
  sanitizeName,
  transliterate,
  uniquify,
  type NamingFacts,
} from '../../server/packs/curation/naming'

const PORTABLE = /^[A-Za-z0-9_-]+$/

describe('sanitizeName', () => {
  it.each([
    ['Doorbell transformer hum', 'Doorbell_transformer_hum'],
    ['Café crème – brûlée', 'Cafe_creme_brulee'],
    ['Straße Øresund Æther łódź', 'Strasse_Oresund_AEther_lodz'],
    ['brightness 30 %', 'brightness_30_pct'],
    ['a - b', 'a-b'],
    ['a__b---c _-_ d', 'a_b-c-d'],
    ['  leading and trailing  ', 'leading_and_trailing'],
    ['__--__', 'item'],
    ['', 'item'],
    ['日本語のハム', 'item'],
    ['hum/../../etc/passwd', 'hum_etc_passwd'],
    ['tab\there\nnewline', 'tab_here_newline'],
    ['CON', 'CON_file'],
    ['lpt1', 'lpt1_file'],
    ['Nul', 'Nul_file'],
    ['console', 'console'],
    ['ﬁeld ½ ①', 'field_1_2_1'],
  ])('%j → %j', (input, want) => {
    expect(sanitizeName(input)).toBe(want)
  })

  it('cuts to 80 characters without leaving a separator at the end', () => {
    const long = `${'a'.repeat(79)} tail`
    const s = sanitizeName(long)
    expect(s).toBe('a'.repeat(79))
    expect(sanitizeName('b'.repeat(200))).toHaveLength(80)
  })

  it('always gives a portable, trimmed, collapsed name of 1–80 characters, and is idempotent (property, fast-check)', () => {
    fc.assert(
      fc.property(fc.string({ unit: 'grapheme', maxLength: 200 }), (text) => {
        const s = sanitizeName(text)
        expect(s).toMatch(PORTABLE)
        expect(s.length).toBeGreaterThanOrEqual(1)
        expect(s.length).toBeLessThanOrEqual(80)
        expect(s).not.toMatch(/^[-_]|[-_]$|[-_]{2}/)
        expect(sanitizeName(s)).toBe(s)
      }),
      { numRuns: 500 },
    )
  })

  it('transliterates accents by Unicode decomposition (NFKD) and drops the marks', () => {
    expect(transliterate('ÀÉÎÕÜçñ')).toBe('AEIOUcn')
  })
})

describe('uniquify', () => {
  it('keeps the first name and numbers repeats _2, _3… regardless of case', () => {
    expect(uniquify(['hum', 'hum', 'Hum', 'whine', 'HUM'])).toEqual(['hum', 'hum_2', 'Hum_3', 'whine', 'HUM_4'])
  })

  it('does not take a name given later as a generated suffix', () => {
    expect(uniquify(['hum', 'hum', 'hum_2'])).toEqual(['hum', 'hum_3', 'hum_2'])
  })

  it('keeps suffixed names within 80 characters', () => {
    const base = 'x'.repeat(80)
    const out = uniquify([base, base, base])
    expect(out[0]).toBe(base)
    expect(out[1]).toBe(`${'x'.repeat(78)}_2`)
    expect(out[2]).toBe(`${'x'.repeat(78)}_3`)
  })

  it('always gives distinct (case-insensitive) portable names of at most 80 characters (property, fast-check)', () => {
    const word = fc.constantFrom('hum', 'Hum', 'hum_2', 'whine', 'x'.repeat(80), 'x'.repeat(79), 'a-b')
    fc.assert(
      fc.property(fc.array(word, { maxLength: 60 }), (names) => {
        const out = uniquify(names)
        expect(out).toHaveLength(names.length)
        expect(new Set(out.map((n) => n.toLowerCase())).size).toBe(out.length)
        for (const n of out) {
          expect(n).toMatch(PORTABLE)
          expect(n.length).toBeLessThanOrEqual(80)
        }
        // The first occurrence of each name (ignoring case) is kept as it is.
        names.forEach((n, i) => {
          if (names.findIndex((m) => m.toLowerCase() === n.toLowerCase()) === i) expect(out[i]).toBe(n)
        })
      }),
      { numRuns: 300 },
    )
  })
})

const facts = (o: Partial<NamingFacts> = {}): NamingFacts => ({
  devices: [{ name: 'Doorbell transformer', state: 'idle' }],
  tags: ['hum', 'mains'],
  title: 'Transformer close up',
  filename: 'T001_transformer.wav',
  sessionTitle: 'Workshop bench sweep',
  sessionDate: '2026-11-21',
  takeId: 12,
  kind: 'one-shot',
  packName: 'Bench pack',
  regionName: null,
  index: 3,
  count: 12,
  ...o,
})

describe('naming templates', () => {
  it('fills every token', () => {
    expect(
      fillTemplate(
        '{device}|{state}|{kind}|{descriptor}|{session}|{date}|{index}|{take}|{title}|{file}|{pack}',
        facts(),
      ),
    ).toBe(
      'Doorbell transformer|idle|one-shot|hum|Workshop bench sweep|20261121|03|12|Transformer close up|T001_transformer|Bench pack',
    )
  })

  it('uses the first title word as descriptor when a take has no tags, and pads {index} to the item count', () => {
    expect(fillTemplate('{descriptor}_{index}', facts({ tags: [], count: 150, index: 7 }))).toBe('Transformer_007')
  })

  it('gives portable, unique names for a whole pack, explicit names included', () => {
    const names = outputNames('{device}_{descriptor}', [
      { name: null, facts: facts({ index: 1 }) },
      { name: null, facts: facts({ index: 2 }) },
      { name: 'Doorbell transformer hum', facts: facts({ index: 3 }) },
      { name: null, facts: facts({ devices: [], tags: [], title: '', index: 4 }) },
    ])
    expect(names).toEqual([
      'Doorbell_transformer_hum',
      'Doorbell_transformer_hum_2',
      'Doorbell_transformer_hum_3',
      'item',
    ])
  })

  it('fills {region} with the region name, and the default template names a region item by its region', () => {
    expect(fillTemplate('{region}-{index}', facts({ regionName: 'Burst three' }))).toBe('Burst three-03')
    expect(fillTemplate('{region}', facts())).toBe('')
    const names = outputNames(DEFAULT_NAMING_TEMPLATE, [
      { name: null, facts: facts({ index: 1, regionName: 'Clean loop' }) },
      { name: null, facts: facts({ index: 2 }) },
      { name: null, facts: facts({ index: 3, regionName: '  ' }) },
    ])
    expect(names).toEqual([
      'Doorbell_transformer_Clean_loop_01',
      'Doorbell_transformer_hum_02',
      'Doorbell_transformer_hum_03',
    ])
    // A template of the designer's own is left as written.
    expect(
      outputNames('{descriptor}_{index}', [{ name: null, facts: facts({ index: 1, regionName: 'Clean loop' }) }]),
    ).toEqual(['hum_01'])
  })

  it('names the zip <pack-name>_v<version>.zip', () => {
    expect(buildFileName('Bench Hums & Hiss', 3)).toBe('Bench_Hums_and_Hiss_v3.zip')
  })
})
