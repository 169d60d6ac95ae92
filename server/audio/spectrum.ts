// Average power spectrum of the mono mix (mean of all channels) by Welch's
// method: Hann-windowed segments, mean removed, FFT of the smallest power of two
// giving ≤ 1 Hz resolution. For the hum verdict a take of two or more channels
// is also looked at as its side signal ch1 − ch2 (L − R): hum in antiphase
// between the channels cancels in the mix and stands in the side signal, and hum
// on one channel only shows in both. The side signal's FFT is a quarter of the
// mix's (the first quarter of each segment: about 3 Hz bins at 48 kHz, ample for
// harmonics 50 Hz apart, at a fifth of the cost). Each segment gets its own
// verdict, which places the hum in time. At most MAX_SEGMENTS segments are taken, evenly
// spaced through the take (50 % overlap when fewer fit), so an hour-long take
// costs no more than a few minutes' one. 128 segments put the spread of each
// averaged bin near ±0.4 dB (1/√128), ample for finding tones 10 dB above the
// floor; more would cost FFT time without changing any reported feature. The
// positions are known up front from the frame count, which keeps this a
// single streaming pass.
import FFT from 'fft.js'
import type { Spectrum } from '@shared/schemas/analysis'
import type { MainsHum, TimeSpan } from '@shared/schemas/analysis'
import { describeSpectrum, readHum } from './spectrum-features'

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
  /** ch0 − ch1 (stereo and more). */
  side: Float64Array | null
}

/** dst[at..] = planar[0][from..to) − planar[1][from..to). */
function sideInto(dst: Float64Array, at: number, planar: Float32Array[], from: number, to: number): void {
  const a = planar[0]
  const b = planar[1]
  for (let i = from, j = at; i < to; i++, j++) dst[j] = a[i] - b[i]
}

/** A single segment's spectrum is one periodogram (noisy): its verdict asks harmonics to stand 10 dB out. */
const SEGMENT_HUM_DB = 10

/** Names of the signals the hum is looked for in: the mix, and the side signal. */
const SIGNALS = ['all channels', 'L−R'] as const

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
  private readonly stereo: boolean
  private readonly spareSide: Float64Array[] = []
  private readonly sideSize: number
  private readonly sideFft: FFT | null
  private readonly out2: Float64Array
  private sideWindow: Float64Array | null = null
  private sideWindowEnergy = 0
  /** Summed power of the side signal; the mix's is `sum`. */
  private readonly sideSum: Float64Array
  private readonly mixPower: Float64Array
  private readonly sidePower: Float64Array
  private sideSegments = 0
  /** Per analysed segment: where it lies and which mains frequency (if any) it holds. */
  private readonly humSegments: { start: number; length: number; hz: 50 | 60 | null }[] = []

  constructor(sampleRate: number, channels: number, frames: number) {
    this.sampleRate = sampleRate
    this.channels = channels
    this.size = fftSizeFor(sampleRate)
    this.length = Math.max(1, Math.min(this.size, frames))
    this.starts = segmentStarts(frames, this.size)
    this.fft = new FFT(this.size)
    this.out = new Float64Array(2 * this.size)
    this.sum = new Float64Array(this.size / 2 + 1)
    this.stereo = channels >= 2
    this.sideSize = this.size / 4
    this.sideFft = this.stereo ? new FFT(this.sideSize) : null
    this.out2 = new Float64Array(this.stereo ? 2 * this.sideSize : 0)
    this.sideSum = new Float64Array(this.stereo ? this.sideSize / 2 + 1 : 0)
    this.mixPower = new Float64Array(this.size / 2 + 1)
    this.sidePower = new Float64Array(this.sideSum.length)
  }

  push(planar: Float32Array[]): void {
    const n = planar[0]?.length ?? 0
    const blockEnd = this.position + n
    while (this.nextStart < this.starts.length && this.starts[this.nextStart] < blockEnd) {
      const buffer = this.spare.pop() ?? new Float64Array(this.size)
      const side = this.stereo ? (this.spareSide.pop() ?? new Float64Array(this.sideSize)) : null
      this.active.push({ start: this.starts[this.nextStart++], filled: 0, buffer, side })
    }
    for (const seg of this.active) {
      const from = Math.max(0, seg.start + seg.filled - this.position)
      const to = Math.min(n, seg.start + this.length - this.position)
      if (to <= from) continue
      mixInto(seg.buffer, seg.filled, planar, from, to)
      if (seg.side && seg.filled < this.sideSize)
        sideInto(seg.side, seg.filled, planar, from, Math.min(to, from + this.sideSize - seg.filled))
      seg.filled += to - from
    }
    this.position = blockEnd
    for (let k = this.active.length - 1; k >= 0; k--) {
      const seg = this.active[k]
      if (seg.filled < this.length) continue
      this.accumulate(seg)
      this.active.splice(k, 1)
      this.spare.push(seg.buffer)
      if (seg.side) this.spareSide.push(seg.side)
    }
  }

  /** Mean removed, Hann window and scale applied in place, then the FFT into `o`. */
  private transform(b: Float64Array, len: number, scale: number, o: Float64Array): void {
    let mean = 0
    for (let i = 0; i < len; i++) mean += b[i]
    mean /= len
    const w = this.hann(len)
    for (let i = 0; i < len; i++) b[i] = (b[i] - mean) * w[i] * scale
    if (len < b.length) b.fill(0, len)
    this.fft.realTransform(o, b)
  }

  private accumulate(seg: Segment): void {
    const len = seg.filled
    const o = this.out
    this.transform(seg.buffer, len, 1 / this.channels, o) // the mono mix is the mean of the channels
    const sum = this.sum
    const mixPower = this.mixPower
    for (let k = 0, m = sum.length; k < m; k++) {
      const re = o[2 * k]
      const im = o[2 * k + 1]
      const p = re * re + im * im
      sum[k] += p
      mixPower[k] = p
    }
    let hz = readHum(this.spectrumOf(mixPower, 1), SEGMENT_HUM_DB).hz
    if (seg.side && this.sideFft) {
      const sideLen = Math.min(len, this.sideSize)
      this.transformSide(seg.side, sideLen)
      const o2 = this.out2
      const sp = this.sidePower
      for (let k = 0; k < sp.length; k++) {
        const p = o2[2 * k] * o2[2 * k] + o2[2 * k + 1] * o2[2 * k + 1]
        sp[k] = p
        this.sideSum[k] += p
      }
      this.sideSegments++
      hz ??= readHum(this.sideSpectrum(sp, 1), SEGMENT_HUM_DB).hz
    }
    this.humSegments.push({ start: seg.start, length: len, hz })
    this.segments++
  }

  private transformSide(b: Float64Array, len: number): void {
    if (this.sideWindow?.length !== len) {
      const w = new Float64Array(len)
      let energy = 0
      for (let i = 0; i < len; i++) {
        w[i] = len > 1 ? 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / (len - 1)) : 1
        energy += w[i] * w[i]
      }
      this.sideWindow = w
      this.sideWindowEnergy = energy
    }
    let mean = 0
    for (let i = 0; i < len; i++) mean += b[i]
    mean /= len
    const w = this.sideWindow
    for (let i = 0; i < len; i++) b[i] = (b[i] - mean) * w[i]
    if (len < b.length) b.fill(0, len)
    this.sideFft!.realTransform(this.out2, b)
  }

  private sideSpectrum(power: Float64Array, segments: number): PowerSpectrum {
    return {
      power: segments === 1 ? power : power.map((p) => p / segments),
      fftSize: this.sideSize,
      sampleRate: this.sampleRate,
      windowEnergy: this.sideWindowEnergy,
    }
  }

  private spectrumOf(power: Float64Array, segments: number): PowerSpectrum {
    return {
      power: segments === 1 ? power : power.map((p) => p / segments),
      fftSize: this.size,
      sampleRate: this.sampleRate,
      windowEnergy: this.windowEnergy,
    }
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
        this.accumulate(seg)
      }
    }
    this.active.length = 0
    if (this.segments === 0) return null
    const power = this.sum.map((p) => p / this.segments)
    return { power, fftSize: this.size, sampleRate: this.sampleRate, windowEnergy: this.windowEnergy }
  }

  finish(): Spectrum {
    const mix = this.powerSpectrum()
    return describeSpectrum(mix, mix ? this.hum(mix) : undefined)
  }

  /**
   * The hum verdict from the averaged spectra of every signal (the mix; for stereo also L − R, L and
   * R): the signal with the clearest mains pattern gives the figures, and every signal showing the
   * same mains frequency is named. The share and spans come from the segments' own verdicts.
   */
  private hum(mix: PowerSpectrum): MainsHum {
    const spectra = this.sideSegments > 0 ? [mix, this.sideSpectrum(this.sideSum, this.sideSegments)] : [mix]
    const readings = spectra.map((s, i) => ({ name: SIGNALS[i], r: readHum(s) }))
    const found = readings.filter((x) => x.r.hz !== null)
    const best = found.length > 0 ? found.reduce((a, b) => (b.r.confidence > a.r.confidence ? b : a)) : readings[0]
    const hz = best.r.hz
    const signals = hz === null ? [] : found.filter((x) => x.r.hz === hz).map((x) => x.name)
    let share: number | null = null
    const spans: TimeSpan[] = []
    if (hz !== null && this.humSegments.length > 0) {
      const rate = this.sampleRate
      const segs = this.humSegments
      share = Math.round((segs.filter((s) => s.hz === hz).length / segs.length) * 1000) / 1000
      for (let i = 0; i < segs.length; i++) {
        if (segs[i].hz !== hz) continue
        let j = i
        while (j + 1 < segs.length && segs[j + 1].hz === hz) j++
        const span = { startSeconds: segs[i].start / rate, endSeconds: (segs[j].start + segs[j].length) / rate }
        // One segment missed inside a stretch of hum (a click, a dropout) does not split it.
        const last = spans[spans.length - 1]
        if (last && span.startSeconds - last.endSeconds < segs[i].length / rate) last.endSeconds = span.endSeconds
        else spans.push(span)
        i = j
      }
    }
    return {
      hz,
      ratioDb: best.r.ratioDb,
      measuredHz: best.r.measuredHz,
      harmonics: best.r.harmonics,
      confidence: best.r.confidence,
      signals,
      share,
      spans,
    }
  }
}
