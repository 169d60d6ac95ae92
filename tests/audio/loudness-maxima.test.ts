// Maximum momentary and short-term loudness at any offset, and exact gating.
// Sources: EBU Tech 3341 (v4, 2016) test cases 10 and 13, rebuilt here from the
// document's definitions (recalled from memory: each case is 20 files holding
// one stereo 1 kHz tone burst as long as the meter's window, 3 s for the
// short-term case 10 and 0.4 s for the momentary case 13, at the level that reads
// −23.0 LUFS, each file starting the burst at a different offset; the document's
// expected maximum is −23.0 ± 0.1 LU). The exact offsets are not recalled, so
// every case is run at 20 offsets spread over a 100 ms grid that none of them
// lands on, plus the offsets the issue names (1, 10, 37, 50 ms).
// ITU-R BS.1770-4 §2.8 for the gating formula of the two-level signal.
import { describe, expect, it } from 'vitest'
import { biquadGain, preFilter, rlbHighPass } from '../../server/audio/k-weighting'
import { measure, steppedSine } from '../helpers/signals'

const FS = 48000

/** A stereo 1 kHz burst at −23 dBFS (−23.0 LUFS, EBU Tech 3341 case 1) of `seconds`, after `offset` s of silence and 1 s before. */
function burst(offset: number, seconds: number) {
  const s = steppedSine(FS, [
    { seconds: 1 + offset, dbfs: -200 },
    { seconds, dbfs: -23 },
    { seconds: 1, dbfs: -200 },
  ])
  return measure([s, s], { sampleRate: FS, channelMask: 0 }, 4096).loudness
}

const gridOffsets = Array.from({ length: 20 }, (_, k) => 0.0017 + k * 0.005)
const namedOffsets = [0.001, 0.01, 0.037, 0.05]

describe('EBU Tech 3341 case 13: maximum momentary loudness of a 400 ms burst at any offset (−23.0 ± 0.1 LUFS)', () => {
  for (const offset of [...gridOffsets, ...namedOffsets]) {
    it(`burst starting ${(offset * 1000).toFixed(1)} ms after a 100 ms boundary`, () => {
      const l = burst(offset, 0.4)
      expect(l.maxMomentaryLufs).not.toBeNull()
      expect(Math.abs(l.maxMomentaryLufs! + 23)).toBeLessThanOrEqual(0.1)
    })
  }
})

describe('EBU Tech 3341 case 10: maximum short-term loudness of a 3 s burst at any offset (−23.0 ± 0.1 LUFS)', () => {
  for (const offset of [...gridOffsets, ...namedOffsets]) {
    it(`burst starting ${(offset * 1000).toFixed(1)} ms after a 100 ms boundary`, () => {
      const l = burst(offset, 3)
      expect(l.maxShortTermLufs).not.toBeNull()
      expect(Math.abs(l.maxShortTermLufs! + 23)).toBeLessThanOrEqual(0.1)
    })
  }
})

describe('exact relative gate (ITU-R BS.1770-4 §2.8) on a two-level signal with blocks 0.004 LU from the gate', () => {
  // Stereo 1 kHz sine: B for 30 s, then A for 10 s, both on the 100 ms grid, phase-continuous.
  // Blocks (400 ms, every 100 ms) wholly in B: 30·10 − 3 = 297; three straddle the step with A
  // fractions 1/4, 1/2, 3/4; then 10·10 − 3 = 97 in A. (B comes first because the K-filter rings
  // for a few ms after a step down, which would lift the first B block by about 0.005 LU; after the
  // step up the ringing falls in blocks that hold A, far above the gate.) With powers pA and pB = r·pA (a sine's
  // block power is a² · G² with G the K-filter's gain at 1 kHz, both channels weighted 1):
  //   sum of all blocks = (97 + 1.5)·pA + (297 + 1.5)·pB, over N = 397 blocks;
  //   relative gate = (sum / N) / 10. Putting pB at the gate × q: r = 98.5·q / (10·N − 298.5·q).
  const NA = 97
  const NB = 297
  const N = NA + NB + 3
  const A_DBFS = -20
  const k1 = preFilter(FS)
  const k2 = rlbHighPass(FS)
  const g2 = (biquadGain(k1, 1000, FS) * biquadGain(k2, 1000, FS)) ** 2
  const pA = 10 ** (A_DBFS / 10) * g2

  function run(luFromGate: number) {
    const q = 10 ** (luFromGate / 10)
    const r = ((NA + 1.5) * q) / (10 * N - (NB + 1.5) * q)
    const s = steppedSine(FS, [
      { seconds: 30, dbfs: A_DBFS + 10 * Math.log10(r) },
      { seconds: 10, dbfs: A_DBFS },
    ])
    return { r, integrated: measure([s, s], { sampleRate: FS, channelMask: 0 }).loudness.integratedLufs }
  }

  it('B 0.004 LU above the gate: every block counts, the exact mean of all 397', () => {
    const { r, integrated } = run(0.004)
    const expected = -0.691 + 10 * Math.log10(((NA + 1.5) * pA + (NB + 1.5) * r * pA) / N)
    expect(integrated).not.toBeNull()
    expect(Math.abs(integrated! - expected)).toBeLessThanOrEqual(0.01)
  })

  it('B 0.004 LU below the gate: B is gated out, the mean of the 97 A blocks and 3 straddling ones', () => {
    const { r, integrated } = run(-0.004)
    const expected = -0.691 + 10 * Math.log10(((NA + 1.5) * pA + 1.5 * r * pA) / (NA + 3))
    expect(integrated).not.toBeNull()
    expect(Math.abs(integrated! - expected)).toBeLessThanOrEqual(0.01)
  })
})
