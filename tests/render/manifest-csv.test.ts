// manifest.csv carries no spreadsheet formulas: OWASP's CSV-injection rule (a
// text cell beginning with =, +, -, @, tab or CR is prefixed with ' and quoted);
// the file still parses as RFC 4180 with Python's csv module, numbers stay numbers.
import { execFileSync } from 'node:child_process'
import { describe, expect, it } from 'vitest'
import type { ManifestItem } from '@shared/schemas/packs'
import { manifestCsv } from '../../server/packs/builds/pack-zip'

const item = (o: Partial<ManifestItem>): ManifestItem => ({
  file: 'hum_01.wav',
  durationSeconds: 2.5,
  sampleRate: 48000,
  bitDepth: 24,
  channels: 2,
  integratedLufs: -18.2,
  truePeakDbtp: -1.5,
  loudnessRangeLu: 3,
  underTargetDb: null,
  sources: ['bench supply (idle)'],
  tags: ['hum'],
  takeId: 7,
  licence: 'Use in your productions.',
  sha256: 'ab'.repeat(32),
  regionName: null,
  ...o,
})

const parse = (csv: string): Record<string, string>[] =>
  JSON.parse(
    execFileSync(
      'python3',
      [
        '-c',
        'import csv, io, json, sys; print(json.dumps(list(csv.DictReader(io.StringIO(sys.stdin.read(), newline="")))))',
      ],
      { input: csv, encoding: 'utf8' },
    ),
  )

describe('manifest.csv', () => {
  it('prefixes every text cell that begins with = + - @ tab or CR with a quote character', () => {
    const hostile = ['=HYPERLINK("http://x.invalid","y")', '+1+1', '-2+3', '@SUM(A1)', '\tcmd', '\rcmd']
    const rows = parse(manifestCsv(hostile.map((h, i) => item({ tags: [h], licence: h, sources: [h], takeId: i }))))
    for (const [i, h] of hostile.entries()) {
      expect(rows[i].tags).toBe(`'${h}`)
      expect(rows[i].licence).toBe(`'${h}`)
      expect(rows[i].sources).toBe(`'${h}`)
    }
    // The raw text: such a cell is quoted, so the quote character is inside the field.
    expect(manifestCsv([item({ tags: ['=1+1'] })])).toContain(`"'=1+1"`)
  })

  it('leaves numbers (negative loudness too) and ordinary text as they are', () => {
    const [row] = parse(manifestCsv([item({ tags: ['hum', 'loop'], licence: 'Free, with credit' })]))
    expect(row.integratedLufs).toBe('-18.2')
    expect(row.truePeakDbtp).toBe('-1.5')
    expect(row.tags).toBe('hum;loop')
    expect(row.licence).toBe('Free, with credit')
  })
})
