// The library row's glyph on takes sox makes: what sox put where (a 50 Hz tone
// throughout, a 9.2 kHz whine in the second half only) is the reference for
// which cells are loud. The quantisation (0..255 over 60 dB below the loudest
// cell) is this project's own choice.
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { GLYPH_BANDS, GLYPH_COLUMNS, glyphBands } from '../../server/audio/glyph'
import { sox } from '../helpers/reference-tools'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-glyph-'))
afterAll(() => rmSync(dir, { recursive: true, force: true }))

const synth = (file: string, rate: number, ...effect: string[]) => {
  const p = join(dir, file)
  sox(['-n', '-r', String(rate), '-b', '24', '-c', '1', p, 'synth', ...effect])
  return p
}

/** 8 s: 50 Hz at −12 dBFS and faint noise throughout, a 9.2 kHz whine at −20 dBFS from 4 s on. */
function humThenWhine(rate: number): string {
  const hum = synth(`hum-${rate}.wav`, rate, '8', 'sine', '50', 'vol', '-12dB')
  const noise = synth(`noise-${rate}.wav`, rate, '8', 'whitenoise', 'vol', '-70dB')
  const whine = join(dir, `whine-${rate}.wav`)
  sox([
    '-n',
    '-r',
    String(rate),
    '-b',
    '24',
    '-c',
    '1',
    whine,
    'synth',
    '4',
    'sine',
    '9200',
    'vol',
    '-20dB',
    'pad',
    '4',
    '0',
  ])
  const out = join(dir, `mix-${rate}.wav`)
  sox(['-m', ...[hum, noise, whine].flatMap((p) => ['-v', '1', p]), out])
  return out
}

const bandOf = (centres: number[], hz: number) =>
  centres.reduce((best, c, i) => (Math.abs(Math.log(c / hz)) < Math.abs(Math.log(centres[best] / hz)) ? i : best), 0)

describe('take glyph', () => {
  for (const rate of [48000, 44100]) {
    it(`draws the hum band throughout and the whine band only where sox put it (${rate} Hz)`, async () => {
      const { glyph } = await analyzeFile(humThenWhine(rate))
      expect(glyph.columns).toBe(GLYPH_COLUMNS)
      expect(glyph.bands).toHaveLength(GLYPH_BANDS)
      expect(glyph.levels).toHaveLength(GLYPH_COLUMNS * GLYPH_BANDS)
      expect(glyph.humHz).toBe(50)
      expect(Math.abs(glyph.whineHz! - 9200)).toBeLessThan(10)
      const hum = bandOf(glyph.bands, 50)
      const whine = bandOf(glyph.bands, 9200)
      const at = (c: number, b: number) => glyph.levels[c * GLYPH_BANDS + b]
      for (let c = 0; c < GLYPH_COLUMNS; c++) expect(at(c, hum)).toBeGreaterThan(230)
      // Well inside each half (a slice's windows straddle 4 s near the middle).
      for (let c = 2; c < GLYPH_COLUMNS / 2 - 2; c++) expect(at(c, whine)).toBeLessThan(60)
      for (let c = GLYPH_COLUMNS / 2 + 2; c < GLYPH_COLUMNS - 2; c++) expect(at(c, whine)).toBeGreaterThan(150)
      // A band with neither tone stays near the noise, far below the hum.
      expect(at(10, bandOf(glyph.bands, 2000))).toBeLessThan(100)
    })
  }

  it('has no hum and no whine in plain noise, and covers a take shorter than one window', async () => {
    const noise = await analyzeFile(synth('short.wav', 48000, '0.05', 'whitenoise', 'vol', '-20dB'))
    expect(noise.glyph.humHz).toBeNull()
    expect(noise.glyph.whineHz).toBeNull()
    expect(noise.glyph.levels.some((v) => v > 0)).toBe(true)
  })

  it('spaces the bands evenly in log frequency from 40 Hz up to the take’s top', () => {
    const { centres } = glyphBands(48000, 4096)
    const ratios = centres.slice(1).map((c, i) => c / centres[i])
    for (const r of ratios) expect(r).toBeCloseTo(ratios[0], 2)
    expect(centres[0]).toBeGreaterThan(40)
    expect(centres[centres.length - 1]).toBeLessThan(20000)
  })
})
