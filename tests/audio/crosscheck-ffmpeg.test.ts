// Cross-check against ffmpeg's ebur128 filter (a BS.1770 / EBU R 128 meter) on
// signals that sox and ffmpeg generate themselves (tests/helpers/reference-tools.ts),
// at 44.1, 48 and 96 kHz, in 16-bit, 24-bit and 32-bit float, mono and stereo. ffmpeg prints one decimal,
// so a difference up to 0.05 is its rounding alone.
// Tolerances: integrated ±0.1 LU (EBU Tech 3341 §2.9 meter tolerance), true
// peak ±0.3 dB (ffmpeg oversamples with its own resampler, not the BS.1770-4
// Annex 2 filter, so sub-dB differences on broadband noise are expected),
// loudness range ±1 LU (EBU Tech 3342 §4 meter tolerance).
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { ffmpegEbur128, generateReferenceSignals, REFERENCE_SIGNALS } from '../helpers/reference-tools'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-xff-'))
let files: { name: string; file: string }[] = []

beforeAll(() => {
  files = generateReferenceSignals(dir)
})
afterAll(() => rmSync(dir, { recursive: true, force: true }))

describe('integrated loudness, true peak and loudness range against ffmpeg ebur128', () => {
  REFERENCE_SIGNALS.forEach((name, i) => {
    it(name, async () => {
      const { file } = files[i]
      const ref = ffmpegEbur128(file)
      const { loudness, levels } = (await analyzeFile(file)).analysis
      expect(loudness.integratedLufs).not.toBeNull()
      expect(Math.abs(loudness.integratedLufs! - ref.integratedLufs)).toBeLessThanOrEqual(0.1)
      expect(levels.truePeakDbtp).not.toBeNull()
      expect(Math.abs(levels.truePeakDbtp! - ref.truePeakDbtp)).toBeLessThanOrEqual(0.3)
      expect(loudness.loudnessRangeLu).not.toBeNull()
      expect(Math.abs(loudness.loudnessRangeLu! - ref.loudnessRangeLu)).toBeLessThanOrEqual(1)
    })
  })
})
