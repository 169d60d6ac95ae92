// Names under an export profile's length limit: every name within the limit, unique
// (case-insensitively, as the common desktop file systems compare), and still
// readable. The shortening rules are common practice for small sampler displays.
import { describe, expect, it } from 'vitest'
import { itemNames, sanitizeName, shortenName, type NamingFacts } from '../../server/packs/curation/naming'

const facts = (o: Partial<NamingFacts>): NamingFacts => ({
  devices: [{ name: 'Bench supply', state: 'idle' }],
  tags: ['hum'],
  title: 'Transformer hum',
  filename: 'take.wav',
  sessionTitle: 'Workshop',
  sessionDate: '2026-11-02',
  takeId: 1,
  kind: 'one-shot',
  packName: 'Pack',
  regionName: null,
  index: 1,
  count: 1,
  ...o,
})

describe('names under a length limit', () => {
  it('keeps the index whole and shortens the words before it', () => {
    expect(shortenName('bench_supply_transformer_hum_01', 24)).toBe('bnch_spply_trnsfr_hum_01')
    expect(shortenName('bench_supply_transformer_hum_01', 16).endsWith('_01')).toBe(true)
    expect(shortenName('hum_01', 16)).toBe('hum_01')
  })

  for (const limit of [16, 24, 32]) {
    it(`gives ${limit}-character names that are all unique, for many near-identical long names`, () => {
      const items = Array.from({ length: 120 }, (_, i) => ({
        // Names that differ only at their very end, and some only in case.
        name:
          i % 3 === 0
            ? `Laboratory power supply, switching noise under heavy load, variant ${i}`
            : i % 3 === 1
              ? `laboratory_power_supply_switching_noise_under_heavy_load_${String.fromCharCode(97 + (i % 26))}`
              : `LABORATORY_POWER_SUPPLY_SWITCHING_NOISE_UNDER_HEAVY_LOAD_${String.fromCharCode(97 + (i % 26))}`,
        facts: facts({ index: i + 1, count: 120 }),
      }))
      const names = itemNames('{device}_{descriptor}_{index}', items, { maxLength: limit })
      for (const n of names) {
        expect(n.name.length).toBeLessThanOrEqual(limit)
        expect(n.name).toBe(sanitizeName(n.name, limit)) // still portable
        expect(n.full.length).toBeGreaterThan(limit) // the manifest keeps the long one
      }
      expect(new Set(names.map((n) => n.name.toLowerCase())).size).toBe(names.length)
    })
  }

  it('names from the template stay apart by their index', () => {
    const items = Array.from({ length: 12 }, (_, i) => ({
      name: null,
      facts: facts({
        devices: [{ name: 'Switching regulator with ferrite choke', state: '' }],
        index: i + 1,
        count: 12,
      }),
    }))
    const names = itemNames('{device}_{descriptor}_{index}', items, { maxLength: 16 }).map((n) => n.name)
    expect(names[0]).toMatch(/_01$/)
    expect(names[11]).toMatch(/_12$/)
    expect(new Set(names).size).toBe(12)
  })

  it('without a limit, names are as before (80 characters)', () => {
    const [n] = itemNames('{title}', [{ name: null, facts: facts({}) }])
    expect(n).toEqual({ full: 'Transformer_hum', name: 'Transformer_hum' })
  })
})
