// Average power spectrum of the mono mix (mean of all channels) by Welch's
// method: Hann-windowed segments, mean removed, FFT of the smallest power of two
// giving ≤ 1 Hz resolution. At most MAX_SEGMENTS segments are taken, evenly
// spaced through the take (50 % overlap when fewer fit), so an hour-long take
// costs no more than a few minutes' one. 128 segments put the spread of each
// averaged bin near ±0.4 dB (1/√128), ample for finding tones 10 dB above the
// floor; more would cost FFT time without changing any reported feature. The
// positions are known up front from the frame count, which keeps this a
// single streaming pass.
import FFT from 'fft.js'
import type { Spectrum } from '@shared/schemas/analysis'
import { describeSpectrum } from './spectrum-features'

const MAX_SEGMENTS = 128

export interface PowerSpectrum {
  /** Mean |X_k|² for k = 0..N/2 of the windowed segments. */
  power: Float64Array
  fftSize: number
  sampleRate: number
  /** Σw² of the window, for converting bin power to signal level. */
  windowEnergy: number
}

/** dst[at..] = sum over channels of planar[·][from..to) (the 1/channels of the mean is applied with the window). */
function mixInto(dst: Float64Array, at: number, planar: Float32Array[], from: number, to: number): void {
  const first = planar[0]
  for (let i = from, j = at; i < to; i++, j++) dst[j] = first[i]
  for (let ch = 1; ch < planar.length; ch++) {
    const x = planar[ch]
    for (let i = from, j = at; i < to; i++, j++) dst[j] += x[i]
  }
}

export function fftSizeFor(sampleRate: number): number {
  return 2 ** Math.ceil(Math.log2(sampleRate))
}

export function segmentStarts(frames: number, size: number): number[] {
  if (frames <= size) return [0]
  const fit = Math.floor((frames - size) / (size / 2)) + 1
  const count = Math.min(MAX_SEGMENTS, fit)
  if (count === 1) return [0]
  return Array.from({ length: count }, (_, i) => Math.round((i * (frames - size)) / (count - 1)))
}

interface Segment {
  start: number
  filled: number
  buffer: Float64Array
}

export class SpectrumMeter {
  private readonly sampleRate: number
  private readonly channels: number
  private readonly size: number
  private readonly starts: number[]
  private nextStart = 0
  private readonly active: Segment[] = []
  private readonly spare: Float64Array[] = []
  private readonly fft: FFT
  private readonly out: Float64Array
  private readonly sum: Float64Array
  private segments = 0
  private windowEnergy = 0
  private window: Float64Array | null = null
  private position = 0
  private readonly length: number // segment length: the FFT size, or the whole take when shorter

  constructor(sampleRate: number, channels: number, frames: number) {
    this.sampleRate = sampleRate
    this.channels = channels
    this.size = fftSizeFor(sampleRate)
    this.length = Math.max(1, Math.min(this.size, frames))
    this.starts = segmentStarts(frames, this.size)
    this.fft = new FFT(this.size)
    this.out = new Float64Array(2 * this.size)
    this.sum = new Float64Array(this.size / 2 + 1)
  }

  push(planar: Float32Array[]): void {
    const n = planar[0]?.length ?? 0
    const blockEnd = this.position + n
    while (this.nextStart < this.starts.length && this.starts[this.nextStart] < blockEnd) {
      const buffer = this.spare.pop() ?? new Float64Array(this.size)
      this.active.push({ start: this.starts[this.nextStart++], filled: 0, buffer })
    }
    for (const seg of this.active) {
      const from = Math.max(0, seg.start + seg.filled - this.position)
      const to = Math.min(n, seg.start + this.length - this.position)
      if (to <= from) continue
      mixInto(seg.buffer, seg.filled, planar, from, to)
      seg.filled += to - from
    }
    this.position = blockEnd
    for (let k = this.active.length - 1; k >= 0; k--) {
      const seg = this.active[k]
      if (seg.filled < this.length) continue
      this.accumulate(seg.buffer, seg.filled)
      this.active.splice(k, 1)
      this.spare.push(seg.buffer)
    }
  }

  private accumulate(b: Float64Array, len: number): void {
    let mean = 0
    for (let i = 0; i < len; i++) mean += b[i]
    mean /= len
    const w = this.hann(len)
    const scale = 1 / this.channels // the mono mix is the mean of the channels
    for (let i = 0; i < len; i++) b[i] = (b[i] - mean) * w[i] * scale
    if (len < b.length) b.fill(0, len)
    const o = this.out
    this.fft.realTransform(o, b)
    const sum = this.sum
    for (let k = 0, m = sum.length; k < m; k++) {
      const re = o[2 * k]
      const im = o[2 * k + 1]
      sum[k] += re * re + im * im
    }
    this.segments++
  }

  private hann(len: number): Float64Array {
    if (this.window?.length !== len) {
      const w = new Float64Array(len)
      let energy = 0
      for (let i = 0; i < len; i++) {
        w[i] = len > 1 ? 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / (len - 1)) : 1
        energy += w[i] * w[i]
      }
      this.window = w
      this.windowEnergy = energy
    }
    return this.window
  }

  /** The averaged spectrum, or null when no segment could be taken (an empty take). */
  powerSpectrum(): PowerSpectrum | null {
    // A take that ended before its announced length: use a partial segment if it is at least half full.
    for (const seg of this.active) {
      if (this.segments === 0 && seg.filled >= Math.min(this.length, Math.max(2, this.length / 2))) {
        this.accumulate(seg.buffer, seg.filled)
      }
    }
    this.active.length = 0
    if (this.segments === 0) return null
    const power = this.sum.map((p) => p / this.segments)
    return { power, fftSize: this.size, sampleRate: this.sampleRate, windowEnergy: this.windowEnergy }
  }

  finish(): Spectrum {
    return describeSpectrum(this.powerSpectrum())
  }
}
