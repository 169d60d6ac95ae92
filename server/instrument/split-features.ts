// Per-frame features of a sweep for the split detector (split.ts): the level of
// each frame and its power in log-spaced bands. Fed planar blocks as they are
// read, so a take of an hour costs its features (a few MB), not its samples.
import FFT from 'fft.js'

/** Lowest and highest band edges, Hz: the mains region up to where coil pickups stop carrying much. */
const LOW_HZ = 40
const HIGH_HZ = 16000
/** Bands a third of an octave wide: coarse enough that a slow glide moves energy gradually. */
const BANDS_PER_OCTAVE = 3

export interface SplitFeatures {
  sampleRate: number
  /** Frames between feature frames. */
  hop: number
  /** Sample frames fed. */
  frames: number
  /** Feature frames computed. */
  count: number
  bands: number
  /** Mean square of each frame (channels' mean), count values. */
  power: Float32Array
  /** Band powers, count × bands, row-major. */
  bandPower: Float32Array
}

/** FFT size: the power of two nearest to 43 ms (2048 at 48 kHz), so 40 Hz is resolved. */
export function fftSize(sampleRate: number): number {
  return 2 ** Math.max(8, Math.round(Math.log2(0.043 * sampleRate)))
}

/** Band edges as FFT bins, below Nyquist only. */
function bandBins(sampleRate: number, size: number): number[] {
  const top = Math.min(HIGH_HZ, sampleRate / 2)
  const edges: number[] = []
  for (let f = LOW_HZ; f <= top * 1.0001; f *= 2 ** (1 / BANDS_PER_OCTAVE))
    edges.push(Math.round((f * size) / sampleRate))
  const bins = [...new Set(edges.map((b) => Math.max(1, b)))].sort((a, b) => a - b)
  return bins
}

export class SplitFeatureTracker {
  readonly size: number
  private readonly fft: FFT
  private readonly window: Float32Array
  private readonly frame: number[]
  private readonly spectrum: number[]
  private readonly edges: number[]
  /** The channels' mean, from stream sample `bufStart` on; it starts with a frame of zeros before the stream. */
  private buf: Float32Array
  private bufStart: number
  private len: number
  private fed = 0
  private nextAt: number // stream index where the next frame's window ends
  private power: number[] = []
  private bandPower: number[] = []

  constructor(
    readonly sampleRate: number,
    readonly hop: number,
  ) {
    this.size = fftSize(sampleRate)
    this.fft = new FFT(this.size)
    this.window = Float32Array.from(
      { length: this.size },
      (_, i) => 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / this.size),
    )
    this.frame = new Array<number>(this.size).fill(0)
    this.spectrum = this.fft.createComplexArray() as number[]
    this.edges = bandBins(sampleRate, this.size)
    this.buf = new Float32Array(this.size * 4)
    this.bufStart = -this.size
    this.len = this.size
    // The first frame is centred on sample hop/2, so frame k stands for [k·hop, (k+1)·hop).
    this.nextAt = Math.round(this.hop / 2 + this.size / 2)
  }

  get bands() {
    return this.edges.length - 1
  }

  /** Feeds planar samples; the channels' mean is what is analysed. */
  push(block: Float32Array[]) {
    const n = block[0].length
    this.room(n)
    const out = this.buf.subarray(this.len, this.len + n)
    out.set(block[0])
    for (let c = 1; c < block.length; c++) {
      const ch = block[c]
      for (let i = 0; i < n; i++) out[i] += ch[i]
    }
    if (block.length > 1) for (let i = 0, k = 1 / block.length; i < n; i++) out[i] *= k
    this.len += n
    this.fed += n
    while (this.bufStart + this.len >= this.nextAt) this.emit()
  }

  /** Frames whose window would run past the end are computed over the zeros beyond it. */
  finish(): SplitFeatures {
    const total = this.fed
    const frames = Math.ceil(total / this.hop)
    while (this.power.length < frames) {
      this.room(this.hop)
      this.buf.fill(0, this.len, this.len + this.hop)
      this.len += this.hop
      while (this.bufStart + this.len >= this.nextAt && this.power.length < frames) this.emit()
    }
    return {
      sampleRate: this.sampleRate,
      hop: this.hop,
      frames: total,
      count: frames,
      bands: this.bands,
      power: Float32Array.from(this.power.slice(0, frames)),
      bandPower: Float32Array.from(this.bandPower.slice(0, frames * this.bands)),
    }
  }

  /** Room for n more samples: what no frame needs any more is dropped first. */
  private room(n: number) {
    const keep = Math.max(0, this.nextAt - this.size - this.bufStart)
    if (keep > 0) {
      this.buf.copyWithin(0, keep, this.len)
      this.len -= keep
      this.bufStart += keep
    }
    if (this.len + n > this.buf.length) {
      const bigger = new Float32Array(Math.max(this.buf.length * 2, this.len + n))
      bigger.set(this.buf.subarray(0, this.len))
      this.buf = bigger
    }
  }

  private emit() {
    const at = this.nextAt - this.size - this.bufStart
    const x = this.buf
    // Power over the hop itself (the frame's own stretch of time), spectrum over the window around it.
    const hopFrom = at + this.size / 2 - Math.round(this.hop / 2)
    let sq = 0
    for (let i = hopFrom; i < hopFrom + this.hop; i++) sq += x[i] * x[i]
    for (let i = 0; i < this.size; i++) this.frame[i] = x[at + i] * this.window[i]
    this.power.push(sq / this.hop)
    this.fft.realTransform(this.spectrum, this.frame)
    const s = this.spectrum
    for (let b = 0; b + 1 < this.edges.length; b++) {
      let p = 0
      for (let j = this.edges[b]; j < this.edges[b + 1]; j++) p += s[2 * j] * s[2 * j] + s[2 * j + 1] * s[2 * j + 1]
      this.bandPower.push(p)
    }
    this.nextAt += this.hop
  }
}
