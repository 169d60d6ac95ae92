// The one pass over every sample that the cheap measurements share. Per block
// and channel it computes the sum and sum of squares, and the low and high of
// each 4-frame chunk (chunk c = frames 4c..4c+3 of the block; the last may be
// partial), with each chunk's sum and sum of squares. Levels, the
// true-peak bound, the noise floor and the waveform overview read these
// summaries instead of reading the samples again.

export const CHUNK = 4

/** Sum, sum of squares, low and high of x[i..n) (the partial last chunk c), stored as the chunk's. */
function tailChunk(
  x: Float32Array,
  i: number,
  n: number,
  c: number,
  lo: Float32Array,
  hi: Float32Array,
  cs: Float64Array,
  ce: Float64Array,
): { s: number; q: number } {
  let l = Infinity,
    h = -Infinity,
    s = 0,
    q = 0
  for (let j = i; j < n; j++) {
    const v = x[j]
    s += v
    q += v * v
    l = Math.min(l, v)
    h = Math.max(h, v)
  }
  lo[c] = l
  hi[c] = h
  cs[c] = s
  ce[c] = q
  return { s, q }
}

export class BlockScan {
  readonly channels: number
  frames = 0
  chunks = 0
  readonly sum: Float64Array
  readonly sumSquares: Float64Array
  lo: Float32Array[]
  hi: Float32Array[]
  /** Per channel and chunk: Σx and Σx². */
  chunkSum: Float64Array[]
  chunkEnergy: Float64Array[]

  /**
   * Whether scan() finds the chunk lows and highs itself. The measurement engine turns this off and
   * has the true-peak kernel, which finds them anyway, fill lo and hi (meter.ts).
   */
  readonly findsExtremes: boolean

  constructor(channels: number, opts: { findsExtremes?: boolean } = {}) {
    this.findsExtremes = opts.findsExtremes ?? true
    this.channels = channels
    this.sum = new Float64Array(channels)
    this.sumSquares = new Float64Array(channels)
    this.lo = Array.from({ length: channels }, () => new Float32Array(0))
    this.hi = Array.from({ length: channels }, () => new Float32Array(0))
    this.chunkSum = Array.from({ length: channels }, () => new Float64Array(0))
    this.chunkEnergy = Array.from({ length: channels }, () => new Float64Array(0))
  }

  scan(planar: Float32Array[]): void {
    const n = planar[0]?.length ?? 0
    const chunks = Math.ceil(n / CHUNK)
    if ((this.chunkSum[0]?.length ?? chunks) < chunks) {
      this.lo = this.lo.map(() => new Float32Array(chunks))
      this.hi = this.hi.map(() => new Float32Array(chunks))
      this.chunkSum = this.chunkSum.map(() => new Float64Array(chunks))
      this.chunkEnergy = this.chunkEnergy.map(() => new Float64Array(chunks))
    }
    this.frames = n
    this.chunks = chunks
    // Channels go two at a time: independent chains for the CPU.
    let ch = 0
    if (this.findsExtremes) {
      for (; ch + 1 < this.channels; ch += 2) this.scanPair(ch, ch + 1, planar[ch], planar[ch + 1], n)
      if (ch < this.channels) this.scanPair(ch, -1, planar[ch], planar[ch], n)
    } else {
      for (; ch + 1 < this.channels; ch += 2) this.sumPair(ch, ch + 1, planar[ch], planar[ch + 1], n)
      if (ch < this.channels) this.sumPair(ch, -1, planar[ch], planar[ch], n)
    }
  }

  /** scanPair without the lows and highs (the same sums, in the same order). */
  private sumPair(a: number, b: number, xa: Float32Array, xb: Float32Array, n: number): void {
    const sumA = this.chunkSum[a],
      nrgA = this.chunkEnergy[a]
    const sumB = b < 0 ? sumA : this.chunkSum[b],
      nrgB = b < 0 ? nrgA : this.chunkEnergy[b]
    let sa = 0,
      qa = 0,
      sb = 0,
      qb = 0
    let c = 0
    let i = 0
    for (; i + 3 < n; i += 4, c++) {
      const a0 = xa[i],
        a1 = xa[i + 1],
        a2 = xa[i + 2],
        a3 = xa[i + 3]
      const b0 = xb[i],
        b1 = xb[i + 1],
        b2 = xb[i + 2],
        b3 = xb[i + 3]
      const ca = a0 + a1 + (a2 + a3)
      const cb = b0 + b1 + (b2 + b3)
      sa += ca
      sb += cb
      const ea = a0 * a0 + a1 * a1 + (a2 * a2 + a3 * a3)
      const eb = b0 * b0 + b1 * b1 + (b2 * b2 + b3 * b3)
      sumB[c] = cb
      nrgB[c] = eb
      sumA[c] = ca
      nrgA[c] = ea
      qa += ea
      qb += eb
    }
    this.finishPair(a, b, xa, xb, i, n, c, sa, qa, sb, qb)
  }

  /** Scans channels a and b (b = −1: a only). */
  private scanPair(a: number, b: number, xa: Float32Array, xb: Float32Array, n: number): void {
    const loA = this.lo[a],
      hiA = this.hi[a]
    const loB = b < 0 ? loA : this.lo[b],
      hiB = b < 0 ? hiA : this.hi[b]
    const sumA = this.chunkSum[a],
      nrgA = this.chunkEnergy[a]
    const sumB = b < 0 ? sumA : this.chunkSum[b],
      nrgB = b < 0 ? nrgA : this.chunkEnergy[b]
    let sa = 0,
      qa = 0,
      sb = 0,
      qb = 0
    let c = 0
    let i = 0
    for (; i + 3 < n; i += 4, c++) {
      const a0 = xa[i],
        a1 = xa[i + 1],
        a2 = xa[i + 2],
        a3 = xa[i + 3]
      const b0 = xb[i],
        b1 = xb[i + 1],
        b2 = xb[i + 2],
        b3 = xb[i + 3]
      const ca = a0 + a1 + (a2 + a3)
      const cb = b0 + b1 + (b2 + b3)
      sa += ca
      sb += cb
      const ea = a0 * a0 + a1 * a1 + (a2 * a2 + a3 * a3)
      const eb = b0 * b0 + b1 * b1 + (b2 * b2 + b3 * b3)
      // Channel b is written first so that, when b is a (one channel left), a's values stand.
      sumB[c] = cb
      nrgB[c] = eb
      sumA[c] = ca
      nrgA[c] = ea
      qa += ea
      qb += eb
      // Selects, not branches: on noise a branch here mispredicts half the time.
      const la = a0 < a1 ? a0 : a1,
        ha = a0 < a1 ? a1 : a0,
        ma = a2 < a3 ? a2 : a3,
        na = a2 < a3 ? a3 : a2
      const lb = b0 < b1 ? b0 : b1,
        hb = b0 < b1 ? b1 : b0,
        mb = b2 < b3 ? b2 : b3,
        nb = b2 < b3 ? b3 : b2
      loA[c] = la < ma ? la : ma
      hiA[c] = ha > na ? ha : na
      loB[c] = lb < mb ? lb : mb
      hiB[c] = hb > nb ? hb : nb
    }
    this.finishPair(a, b, xa, xb, i, n, c, sa, qa, sb, qb)
  }

  /** The partial last chunk (frames i..n, chunk c), channel by channel, and the block's totals. */
  private finishPair(
    a: number,
    b: number,
    xa: Float32Array,
    xb: Float32Array,
    i: number,
    n: number,
    c: number,
    sa: number,
    qa: number,
    sb: number,
    qb: number,
  ): void {
    if (i < n) {
      const ta = tailChunk(xa, i, n, c, this.lo[a], this.hi[a], this.chunkSum[a], this.chunkEnergy[a])
      sa += ta.s
      qa += ta.q
      if (b >= 0) {
        const tb = tailChunk(xb, i, n, c, this.lo[b], this.hi[b], this.chunkSum[b], this.chunkEnergy[b])
        sb += tb.s
        qb += tb.q
      }
    }
    this.sum[a] = sa
    this.sumSquares[a] = qa
    if (b >= 0) {
      this.sum[b] = sb
      this.sumSquares[b] = qb
    }
  }
}
