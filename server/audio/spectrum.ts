// Average power spectrum of the mono mix (mean of all channels) by Welch's
// method: Hann-windowed segments, mean removed, FFT of the smallest power of two
// giving ≤ 1 Hz resolution. For the hum verdict a take of two or more channels
// is also looked at channel by channel and as its side signal ch1 − ch2 (L − R):
// hum in antiphase between the channels cancels in the mix and stands in the side
// signal, and hum on one channel of many, diluted in the mix, stands in its own.
// These spectra take a quarter of the mix's FFT size (the first quarter of each
// segment: about 3 Hz bins at 48 kHz, ample for harmonics 50 Hz apart, each at a
// fifth of the mix's cost), and the side signal's comes from the first two
// channels' spectra by linearity, with no FFT of its own. Each segment gets its
// own verdict, which places the hum in time. At most MAX_SEGMENTS segments are taken, evenly
// spaced through the take (50 % overlap when fewer fit), so an hour-long take
// costs no more than a few minutes' one. 128 segments put the spread of each
// averaged bin near ±0.4 dB (1/√128), ample for finding tones 10 dB above the
// floor; more would cost FFT time without changing any reported feature. The
// positions are known up front from the frame count, which keeps this a
// single streaming pass.
import { RealFft } from './real-fft'
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

/**
 * dst[at..] = sum over channels of planar[·][from..to) (the 1/channels of the mean is applied with the
 * window); returns `total` plus the written values, added in order, so a segment's running total is
 * the same number its mean would be summed to afterwards, without another pass over the segment.
 */
function mixInto(
  dst: Float64Array,
  at: number,
  planar: Float32Array[],
  from: number,
  to: number,
  total: number,
): number {
  if (planar.length === 1) return copySummed(dst, at, planar[0], from, to, total)
  if (planar.length === 2) return pairSummed(dst, at, planar[0], planar[1], from, to, total)
  copyInto(dst, at, planar[0], from, to)
  for (let ch = 1; ch < planar.length; ch++) addInto(dst, at, planar[ch], from, to)
  return sumInto(dst, at, at + to - from, total)
}

// One loop per function: a function with two long loops, called a few hundred times, was compiled
// on the first loop's stack and thrown away on reaching the second (which had never run), again and
// again, spending most of its time unoptimised (and allocating a number per sample).

/** dst[at..] = src[from..to). */
function copyInto(dst: Float64Array, at: number, src: Float32Array, from: number, to: number): void {
  for (let i = from, j = at; i < to; i++, j++) dst[j] = src[i]
}

/** dst[at..] += src[from..to). */
function addInto(dst: Float64Array, at: number, src: Float32Array, from: number, to: number): void {
  for (let i = from, j = at; i < to; i++, j++) dst[j] += src[i]
}

/** copyInto, returning total + Σ of the copied values (in order). */
function copySummed(dst: Float64Array, at: number, src: Float32Array, from: number, to: number, total: number): number {
  for (let i = from, j = at; i < to; i++, j++) {
    const v = src[i]
    dst[j] = v
    total += v
  }
  return total
}

/** Two channels in one pass: dst[at..] = a[from..to) + b[from..to) (as a copy then an add would), and the running total. */
function pairSummed(
  dst: Float64Array,
  at: number,
  a: Float32Array,
  b: Float32Array,
  from: number,
  to: number,
  total: number,
): number {
  for (let i = from, j = at; i < to; i++, j++) {
    const v = a[i] + b[i]
    dst[j] = v
    total += v
  }
  return total
}

/** total + Σ b[from..to), in order. */
function sumInto(b: Float64Array, from: number, to: number, total: number): number {
  for (let i = from; i < to; i++) total += b[i]
  return total
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
  /** Σ of buffer[0 .. filled), summed in order as the samples arrive (for the segment's mean). */
  total: number
  buffer: Float64Array
  /** Per channel (two or more channels): the segment's first `hum.size` samples. */
  channels: Float64Array[] | null
}

/** A single segment's spectrum is one periodogram (noisy): its verdict asks harmonics to stand 10 dB out. */
const SEGMENT_HUM_DB = 10

// The loops below are module functions with typed-array arguments, not inline in the methods that
// call them: those run once per segment (128 times a take), and V8 kept throwing away their
// optimised code on the cold paths around the loops; small functions called many times stay hot.

/** Mean of b[0..len). */
function meanOf(b: Float64Array, len: number): number {
  let mean = 0
  for (let i = 0; i < len; i++) mean += b[i]
  return mean / len
}

/** dst[i] = (b[i] − mean)·w[i]·scale for i < len; zeros after (dst: the FFT's input). */
function windowInto(
  dst: Float64Array,
  b: Float64Array,
  len: number,
  mean: number,
  w: Float64Array,
  scale: number,
): void {
  for (let i = 0; i < len; i++) dst[i] = (b[i] - mean) * w[i] * scale
  if (len < dst.length) dst.fill(0, len)
}

/** power[k] = |o_k|², sum[k] += it, for k < power.length (o interleaved re, im). */
function addPower(o: Float64Array, power: Float64Array, sum: Float64Array): void {
  for (let k = 0, m = power.length; k < m; k++) {
    const re = o[2 * k]
    const im = o[2 * k + 1]
    const p = re * re + im * im
    sum[k] += p
    power[k] = p
  }
}

/** As addPower for the difference of two spectra a − b (the FFT is linear: this is the spectrum of the difference signal). */
function addPowerOfDifference(a: Float64Array, b: Float64Array, power: Float64Array, sum: Float64Array): void {
  for (let k = 0, m = power.length; k < m; k++) {
    const re = a[2 * k] - b[2 * k]
    const im = a[2 * k + 1] - b[2 * k + 1]
    const p = re * re + im * im
    sum[k] += p
    power[k] = p
  }
}

function hannWindow(len: number): { w: Float64Array; energy: number } {
  const w = new Float64Array(len)
  let energy = 0
  for (let i = 0; i < len; i++) {
    w[i] = len > 1 ? 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / (len - 1)) : 1
    energy += w[i] * w[i]
  }
  return { w, energy }
}

/** Hum is looked for in the mix, in each channel and in the side signal; these name them in `signals`. */
const MIX = 'all channels'
const SIDE = 'L−R'
/** Channel names: L and R for the first two (as in the side signal's name), then "ch 3", "ch 4"… */
export function channelName(ch: number): string {
  return ch === 0 ? 'L' : ch === 1 ? 'R' : `ch ${ch + 1}`
}

/**
 * The per-channel spectra for the hum verdict (two or more channels): each channel's first quarter
 * of the segment, FFT a quarter the mix's size, and from the first two channels' spectra the side
 * signal's (L − R) by the FFT's linearity, without an FFT of its own.
 */
class ChannelSpectra {
  readonly size: number
  private readonly fft: RealFft
  /** Per channel, then the side signal: summed power, and this segment's. */
  readonly sums: Float64Array[]
  readonly current: Float64Array[]
  private readonly out: Float64Array[]
  private window: Float64Array | null = null
  windowEnergy = 0
  segments = 0

  constructor(size: number, channels: number) {
    this.size = size
    this.fft = new RealFft(size)
    const bins = size / 2 + 1
    this.sums = Array.from({ length: channels + 1 }, () => new Float64Array(bins))
    this.current = Array.from({ length: channels + 1 }, () => new Float64Array(bins))
    this.out = Array.from({ length: 2 }, () => new Float64Array(size + 2))
  }

  /** Transforms each channel's buffer (first `len` samples; mean removed, Hann window) and adds the powers. */
  add(buffers: Float64Array[], len: number): void {
    if (this.window?.length !== len) {
      const h = hannWindow(len)
      this.window = h.w
      this.windowEnergy = h.energy
    }
    const channels = buffers.length
    for (let ch = 0; ch < channels; ch++) {
      const b = buffers[ch]
      windowInto(this.fft.input, b, len, meanOf(b, len), this.window, 1)
      const o = this.fft.transform()
      addPower(o, this.current[ch], this.sums[ch])
      if (ch < 2) this.out[ch].set(o) // the first two channels' spectra make the side signal's
    }
    addPowerOfDifference(this.out[0], this.out[1], this.current[channels], this.sums[channels])
    this.segments++
  }
}

export class SpectrumMeter {
  private readonly sampleRate: number
  private readonly channels: number
  private readonly size: number
  private readonly starts: number[]
  private nextStart = 0
  private readonly active: Segment[] = []
  private readonly spare: Float64Array[] = []
  private readonly spareChannels: Float64Array[][] = []
  private readonly fft: RealFft
  private readonly sum: Float64Array
  private segments = 0
  private windowEnergy = 0
  private window: Float64Array | null = null
  private position = 0
  private readonly length: number // segment length: the FFT size, or the whole take when shorter
  private readonly mixPower: Float64Array
  /** Two or more channels: the per-channel and side spectra. */
  private readonly hum: ChannelSpectra | null
  private readonly names: string[]
  /** Per analysed segment: where it lies and which mains frequency (if any) it holds. */
  private readonly humSegments: { start: number; length: number; hz: 50 | 60 | null }[] = []

  constructor(sampleRate: number, channels: number, frames: number) {
    this.sampleRate = sampleRate
    this.channels = channels
    this.size = fftSizeFor(sampleRate)
    this.length = Math.max(1, Math.min(this.size, frames))
    this.starts = segmentStarts(frames, this.size)
    this.fft = new RealFft(this.size)
    this.sum = new Float64Array(this.size / 2 + 1)
    this.mixPower = new Float64Array(this.size / 2 + 1)
    this.hum = channels >= 2 ? new ChannelSpectra(this.size / 4, channels) : null
    this.names = [MIX, ...(this.hum ? Array.from({ length: channels }, (_, ch) => channelName(ch)) : []), SIDE]
  }

  push(planar: Float32Array[]): void {
    const n = planar[0]?.length ?? 0
    const blockEnd = this.position + n
    const hum = this.hum
    while (this.nextStart < this.starts.length && this.starts[this.nextStart] < blockEnd) {
      const buffer = this.spare.pop() ?? new Float64Array(this.size)
      const channels = hum
        ? (this.spareChannels.pop() ?? Array.from({ length: this.channels }, () => new Float64Array(hum.size)))
        : null
      this.active.push({ start: this.starts[this.nextStart++], filled: 0, total: 0, buffer, channels })
    }
    for (const seg of this.active) {
      const from = Math.max(0, seg.start + seg.filled - this.position)
      const to = Math.min(n, seg.start + this.length - this.position)
      if (to <= from) continue
      seg.total = mixInto(seg.buffer, seg.filled, planar, from, to, seg.total)
      if (seg.channels && hum && seg.filled < hum.size) {
        const end = Math.min(to, from + hum.size - seg.filled)
        for (let ch = 0; ch < this.channels; ch++) copyInto(seg.channels[ch], seg.filled, planar[ch], from, end)
      }
      seg.filled += to - from
    }
    this.position = blockEnd
    for (let k = this.active.length - 1; k >= 0; k--) {
      const seg = this.active[k]
      if (seg.filled < this.length) continue
      this.accumulate(seg)
      this.active.splice(k, 1)
      this.spare.push(seg.buffer)
      if (seg.channels) this.spareChannels.push(seg.channels)
    }
  }

  private accumulate(seg: Segment): void {
    const len = seg.filled
    const b = seg.buffer
    const w = this.hann(len)
    // The mono mix is the mean of the channels: 1/channels goes with the window.
    windowInto(this.fft.input, b, len, seg.total / len, w, 1 / this.channels)
    addPower(this.fft.transform(), this.mixPower, this.sum)
    let hz = readHum(this.spectrumOf(this.mixPower, 1), SEGMENT_HUM_DB).hz
    const hum = this.hum
    if (seg.channels && hum) {
      hum.add(seg.channels, Math.min(len, hum.size))
      for (let i = 0; hz === null && i < hum.current.length; i++)
        hz = readHum(this.humSpectrum(hum.current[i], 1), SEGMENT_HUM_DB).hz
    }
    this.humSegments.push({ start: seg.start, length: len, hz })
    this.segments++
  }

  /** A per-channel or side power spectrum (the quarter-size FFT) as a PowerSpectrum. */
  private humSpectrum(power: Float64Array, segments: number): PowerSpectrum {
    const hum = this.hum!
    return {
      power: segments === 1 ? power : power.map((p) => p / segments),
      fftSize: hum.size,
      sampleRate: this.sampleRate,
      windowEnergy: hum.windowEnergy,
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
      const h = hannWindow(len)
      this.window = h.w
      this.windowEnergy = h.energy
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
    return describeSpectrum(mix, mix ? this.humVerdict(mix) : undefined)
  }

  /**
   * The hum verdict from the averaged spectra of every signal (the mix; with two or more channels
   * also each channel and the side signal L − R): the signal with the clearest mains pattern gives
   * the figures, and every signal showing the same mains frequency is named. The share and spans
   * come from the segments' own verdicts.
   */
  private humVerdict(mix: PowerSpectrum): MainsHum {
    const hum = this.hum
    const spectra = hum && hum.segments > 0 ? [mix, ...hum.sums.map((p) => this.humSpectrum(p, hum.segments))] : [mix]
    const readings = spectra.map((s, i) => ({ name: this.names[i], r: readHum(s) }))
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
