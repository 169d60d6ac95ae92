// K-weighting (ITU-R BS.1770-4: its pre-filter shelf and RLB high-pass, from
// server/audio/k-weighting.ts) applied to planar blocks before the envelope
// follower, so the envelope follows what the loudness meter hears: hum at 50 Hz
// counts for less, presence around 2–4 kHz for more. Scaled so a 1 kHz tone keeps
// its amplitude (the weighting's usual reference frequency, common practice), and
// a plain and a K-weighted envelope of a 1 kHz tone read alike.
import { biquadGain, preFilter, rlbHighPass, type Biquad } from '../audio/k-weighting'

class Stage {
  private z1 = 0
  private z2 = 0
  constructor(private readonly f: Biquad) {}
  /** Transposed direct form II, in place. */
  run(x: Float32Array, gain = 1): void {
    const { b0, b1, b2, a1, a2 } = this.f
    let { z1, z2 } = this
    for (let i = 0; i < x.length; i++) {
      const v = x[i] * gain
      const y = b0 * v + z1
      z1 = b1 * v - a1 * y + z2
      z2 = b2 * v - a2 * y
      x[i] = y
    }
    this.z1 = z1
    this.z2 = z2
  }
}

export class KWeighting {
  private readonly stages: [Stage, Stage][]
  private readonly gain: number

  constructor(sampleRate: number, channels: number) {
    const pre = preFilter(sampleRate)
    const rlb = rlbHighPass(sampleRate)
    this.gain = 1 / (biquadGain(pre, 1000, sampleRate) * biquadGain(rlb, 1000, sampleRate))
    this.stages = Array.from({ length: channels }, () => [new Stage(pre), new Stage(rlb)])
  }

  /** Filtered copies of the block (the reader may reuse its buffers). */
  apply(planar: Float32Array[]): Float32Array[] {
    return planar.map((x, ch) => {
      const y = x.slice()
      const [pre, rlb] = this.stages[ch]
      pre.run(y, this.gain)
      rlb.run(y)
      return y
    })
  }
}
