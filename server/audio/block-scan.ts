// The one pass over every sample that the cheap measurements share. Per block
// and channel it computes the sum and sum of squares, and the low and high of
// each 4-frame chunk (chunk c = frames 4c..4c+3 of the block; the last may be
// partial); per chunk it also sums the squares over all channels. Levels, the
// true-peak bound, the noise floor and the waveform overview read these
// summaries instead of reading the samples again.

export const CHUNK = 4

export class BlockScan {
  readonly channels: number
  frames = 0
  chunks = 0
  readonly sum: Float64Array
  readonly sumSquares: Float64Array
  lo: Float32Array[]
  hi: Float32Array[]
  /** Σx² over all channels per chunk. */
  energy: Float64Array

  constructor(channels: number) {
    this.channels = channels
    this.sum = new Float64Array(channels)
    this.sumSquares = new Float64Array(channels)
    this.lo = Array.from({ length: channels }, () => new Float32Array(0))
    this.hi = Array.from({ length: channels }, () => new Float32Array(0))
    this.energy = new Float64Array(0)
  }

  scan(planar: Float32Array[]): void {
    const n = planar[0]?.length ?? 0
    const chunks = Math.ceil(n / CHUNK)
    if (this.energy.length < chunks) {
      this.lo = this.lo.map(() => new Float32Array(chunks))
      this.hi = this.hi.map(() => new Float32Array(chunks))
      this.energy = new Float64Array(chunks)
    }
    this.frames = n
    this.chunks = chunks
    const e = this.energy
    e.fill(0, 0, chunks)
    for (let ch = 0; ch < this.channels; ch++) {
      const x = planar[ch]
      const lo = this.lo[ch]
      const hi = this.hi[ch]
      let s = 0
      let q = 0
      let c = 0
      let i = 0
      for (; i + 3 < n; i += 4, c++) {
        const a = x[i], b = x[i + 1], d = x[i + 2], f = x[i + 3]
        s += a + b + (d + f)
        const qc = a * a + b * b + (d * d + f * f)
        q += qc
        e[c] += qc
        // Selects, not branches: on noise a branch here mispredicts half the time.
        const lab = a < b ? a : b, hab = a < b ? b : a
        const ldf = d < f ? d : f, hdf = d < f ? f : d
        lo[c] = lab < ldf ? lab : ldf
        hi[c] = hab > hdf ? hab : hdf
      }
      if (i < n) {
        let l = Infinity
        let h = -Infinity
        let qc = 0
        for (; i < n; i++) {
          const v = x[i]
          s += v
          qc += v * v
          l = Math.min(l, v)
          h = Math.max(h, v)
        }
        q += qc
        e[c] += qc
        lo[c] = l
        hi[c] = h
      }
      this.sum[ch] = s
      this.sumSquares[ch] = q
    }
  }
}
