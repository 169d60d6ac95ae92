// Sample-domain levels per channel: sample peak, RMS (plain mathematical
// convention: a full-scale sine reads −3.01 dBFS), DC offset and clipping.
//
// Clipping rule: a sample is at full scale when |x| ≥ 1 − 1 LSB of the file's
// valid bits (that is, the largest positive code or the most negative one) or,
// for float files, when |x| ≥ 1.0. Clipped samples are those in runs of two or
// more consecutive full-scale samples of the same polarity in one channel: a
// single sample touching full scale is a peak, a flat top is a clip.

export interface LevelsOptions {
  channels: number
  encoding: 'pcm' | 'float'
  validBitsPerSample: number
}

export interface ChannelTotals {
  peak: number
  sum: number
  sumSquares: number
  frames: number
  clipped: number
}

export function fullScaleThreshold(encoding: 'pcm' | 'float', validBits: number): number {
  return encoding === 'float' ? 1 : 1 - 2 ** -(validBits - 1)
}

export class LevelsMeter {
  private readonly channels: number
  private readonly threshold: number
  private readonly peak: Float64Array
  private readonly sum: Float64Array
  private readonly sumSquares: Float64Array
  private readonly clipped: Float64Array
  private readonly run: Float64Array // signed length of the current full-scale run (+ top, − bottom)
  private frames = 0

  constructor(opts: LevelsOptions) {
    this.channels = opts.channels
    this.threshold = fullScaleThreshold(opts.encoding, opts.validBitsPerSample)
    this.peak = new Float64Array(opts.channels)
    this.sum = new Float64Array(opts.channels)
    this.sumSquares = new Float64Array(opts.channels)
    this.clipped = new Float64Array(opts.channels)
    this.run = new Float64Array(opts.channels)
  }

  push(planar: Float32Array[]): void {
    this.pushRange(planar, 0, planar[0]?.length ?? 0)
  }

  /** Measures frames [from..to) of the block; returns their Σx² over all channels (for the noise floor). */
  pushRange(planar: Float32Array[], from: number, to: number): number {
    const t = this.threshold
    let energy = 0
    for (let ch = 0; ch < this.channels; ch++) {
      const x = planar[ch]
      // Four partial sums and maxima: independent chains the CPU can run side by side.
      let s0 = 0, s1 = 0, s2 = 0, s3 = 0
      let q0 = 0, q1 = 0, q2 = 0, q3 = 0
      let m0 = 0, m1 = 0, m2 = 0, m3 = 0
      let i = from
      for (; i + 3 < to; i += 4) {
        const a = x[i], b = x[i + 1], c = x[i + 2], d = x[i + 3]
        s0 += a
        s1 += b
        s2 += c
        s3 += d
        q0 += a * a
        q1 += b * b
        q2 += c * c
        q3 += d * d
        // Math.abs and selects, not branches: on noise a sign branch mispredicts half the time.
        const aa = Math.abs(a), ab = Math.abs(b), ac = Math.abs(c), ad = Math.abs(d)
        m0 = aa > m0 ? aa : m0
        m1 = ab > m1 ? ab : m1
        m2 = ac > m2 ? ac : m2
        m3 = ad > m3 ? ad : m3
      }
      for (; i < to; i++) {
        const a = x[i]
        s0 += a
        q0 += a * a
        const aa = Math.abs(a)
        m0 = aa > m0 ? aa : m0
      }
      const m = Math.max(m0, m1, m2, m3) // of this range only
      if (m > this.peak[ch]) this.peak[ch] = m
      // Full scale is rare: the clip scan runs only over ranges that reach it, or that continue a run.
      if (m >= t || this.run[ch] !== 0) this.scanClips(ch, x, from, to)
      const q = q0 + q1 + q2 + q3
      this.sum[ch] += s0 + s1 + s2 + s3
      this.sumSquares[ch] += q
      energy += q
    }
    this.frames += to - from
    return energy
  }

  private scanClips(ch: number, x: Float32Array, from: number, to: number): void {
    const t = this.threshold
    let run = this.run[ch]
    let clipped = this.clipped[ch]
    for (let i = from; i < to; i++) {
      const v = x[i]
      if (Math.abs(v) >= t) {
        const sign = v > 0 ? 1 : -1
        if (run * sign > 0) {
          run += sign
          // The second sample of a run also counts its first.
          clipped += run * sign === 2 ? 2 : 1
        } else run = sign
      } else run = 0
    }
    this.run[ch] = run
    this.clipped[ch] = clipped
  }

  totals(channel: number): ChannelTotals {
    return {
      peak: this.peak[channel],
      sum: this.sum[channel],
      sumSquares: this.sumSquares[channel],
      frames: this.frames,
      clipped: this.clipped[channel],
    }
  }
}
