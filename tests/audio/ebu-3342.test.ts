// EBU Tech 3342 (v3, 2016) "Loudness Range: a measure to supplement EBU R 128
// loudness normalisation", §4 test signals 1–4: stereo 1 kHz sines stepping
// between levels, generated here from the document's descriptions (recalled
// from memory). Expected loudness range and its ±1 LU tolerance are the
// document's.
import { describe, expect, it } from 'vitest'
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
