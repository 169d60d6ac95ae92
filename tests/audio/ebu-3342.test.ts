// EBU Tech 3342 (v3, 2016) "Loudness Range: a measure to supplement EBU R 128
// loudness normalisation", §4 test signals 1–4: stereo 1 kHz sines stepping
// between levels, generated here from the document's descriptions (recalled
// from memory). Expected loudness range and its ±1 LU tolerance are the
// document's.
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { ffmpeg, ffmpegEbur128 } from '../helpers/reference-tools'
import { EBU_3342_CASES, loudnessRange } from '../helpers/signals'

describe('EBU Tech 3342 loudness range, 48 kHz (±1 LU)', () => {
  for (const c of EBU_3342_CASES) {
    it(c.name, () => {
      const lra = loudnessRange(48000, c.segments)
      expect(lra).not.toBeNull()
      expect(Math.abs(lra! - c.expectedLu)).toBeLessThanOrEqual(1)
    })
  }

  it('a steady tone has a loudness range of 0 LU (EBU Tech 3342 §3: spread of short-term loudness)', () => {
    const lra = loudnessRange(48000, [{ seconds: 10, dbfs: -20 }])
    expect(lra).not.toBeNull()
    expect(Math.abs(lra!)).toBeLessThan(0.05)
  })
})

describe('EBU Tech 3342 §2 definition on a level ramp (percentile positions)', () => {
  it('a 1 kHz sine rising 20 dB in 100 s spans 0.85 of its short-term range (10th to 95th percentile)', async () => {
    // Made by ffmpeg: stereo 1 kHz sine, level −40 + 0.2·t dBFS for t in 0..100 s. Its complete 3 s
    // short-term values (t = 3..100 s) lag the level by 1.5 s and so run evenly from −39.7 to −20.3 LUFS;
    // for an even spread the 10th-to-95th percentile distance is 0.85 × 19.4 = 16.49 LU. The step cases
    // above cannot tell the percentiles apart; this can. ffmpeg's ebur128 reading is a second reference.
    const dir = mkdtempSync(join(tmpdir(), 'strayfield-lra-'))
    try {
      const file = join(dir, 'ramp.wav')
      ffmpeg([
        '-f',
        'lavfi',
        '-i',
        'aevalsrc=sin(2*PI*1000*t)*pow(10\\,(-40+20*t/100)/20):s=48000:d=100',
        '-ac',
        '2',
        '-c:a',
        'pcm_s24le',
        file,
      ])
      const lra = (await analyzeFile(file)).analysis.loudness.loudnessRangeLu
      expect(lra).not.toBeNull()
      expect(Math.abs(lra! - 0.85 * 19.4)).toBeLessThanOrEqual(0.1)
      expect(Math.abs(lra! - ffmpegEbur128(file).loudnessRangeLu)).toBeLessThanOrEqual(1)
    } finally {
      rmSync(dir, { recursive: true, force: true })
    }
  })
})
