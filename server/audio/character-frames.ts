// Per-excerpt measurements behind the character descriptors: long frames
// (≈ 170 ms, fine frequency: mel bands, tones, harmonic series), very short
// frames (≈ 2.7 ms: a data chirp's frequency moves between them), the 20 ms
// level every 5 ms (bursts), and clicks in the first difference. All on the
// mono mix of one excerpt; the caller combines excerpts.
import { RealFft } from './real-fft'

export const MEL_BANDS = 24
const MEL_LOW_HZ = 40
const MEL_HIGH_HZ = 16000
const TONE_FROM_HZ = 250
const F0_FROM_HZ = 20
const F0_TO_HZ = 400
const HARMONICS = 8

const pow2Near = (x: number) => 2 ** Math.max(5, Math.round(Math.log2(x)))
const pow2Above = (x: number) => 2 ** Math.max(5, Math.ceil(Math.log2(x)))
const hzToMel = (hz: number) => 2595 * Math.log10(1 + hz / 700)
const melToHz = (mel: number) => 700 * (10 ** (mel / 2595) - 1)

function hann(n: number): Float64Array {
  const w = new Float64Array(n)
  for (let i = 0; i < n; i++) w[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / n)
  return w
}

/** One FFT size with its window and buffers, reused for every frame. */
class Spectra {
  readonly size: number
  private readonly fft: RealFft
  private readonly w: Float64Array
  readonly power: Float64Array
  constructor(size: number) {
    this.size = size
    this.fft = new RealFft(size)
    this.w = hann(size)
    this.power = new Float64Array(size / 2 + 1)
  }
  /** Power spectrum of x[from .. from+size), mean removed. */
  of(x: Float32Array, from: number): Float64Array {
    const n = this.size
    const mean = sumOf(x, from, n) / n
    windowInto(this.fft.input, x, from, mean, this.w)
    powerInto(this.power, this.fft.transform())
    return this.power
  }
}

// One loop per function, here and in the excerpt measures below: each runs a handful of times per
// take over long arrays, so V8 optimises it while inside its first loop, and a second loop that had
// not run yet threw that code away, leaving the rest unoptimised and allocating a number per sample.

/** Σ x[from .. from+n). */
function sumOf(x: Float32Array, from: number, n: number): number {
  let s = 0
  for (let i = 0; i < n; i++) s += x[from + i]
  return s
}

/** dst[i] = (x[from+i] − mean)·w[i] for i < dst.length. */
function windowInto(dst: Float64Array, x: Float32Array, from: number, mean: number, w: Float64Array): void {
  for (let i = 0, n = dst.length; i < n; i++) dst[i] = (x[from + i] - mean) * w[i]
}

/** power[k] = |o_k|² for k < power.length (o interleaved re, im). */
function powerInto(power: Float64Array, o: Float64Array): void {
  for (let k = 0, m = power.length; k < m; k++) power[k] = o[2 * k] * o[2 * k] + o[2 * k + 1] * o[2 * k + 1]
}

/** sum[k] += p[k]. */
function addInto(sum: Float64Array, p: Float64Array): void {
  for (let k = 0, m = p.length; k < m; k++) sum[k] += p[k]
}

/** Parabolic refinement of a peak bin on log power. */
function refine(p: Float64Array, k: number): number {
  if (k <= 0 || k >= p.length - 1) return k
  const a = Math.log(p[k - 1] || 1e-300)
  const b = Math.log(p[k] || 1e-300)
  const c = Math.log(p[k + 1] || 1e-300)
  const d = a - 2 * b + c
  return d < 0 ? k + (0.5 * (a - c)) / d : k
}

function lobe(p: Float64Array, k: number, half: number): number {
  let s = 0
  for (let j = Math.max(0, k - half); j <= Math.min(p.length - 1, k + half); j++) s += p[j]
  return s
}

export interface LongFrame {
  /** Start of the frame in seconds from the start of the take. */
  at: number
  power: number
  /** log10 band powers (×10: dB) of the mel bands. */
  mel: Float32Array
  /** The strongest tone above 400 Hz and its share of the frame's power. */
  toneHz: number
  toneShare: number
  /** The best harmonic series below 400 Hz and the share of the power its first eight harmonics hold. */
  f0Hz: number
  harmonicShare: number
}

export interface ExcerptMeasures {
  seconds: number
  frames: LongFrame[]
  /** Mean power spectrum of the long frames (for flatness). */
  meanPower: Float64Array
  binHz: number
  /** Short frames: frequency of the strongest component, its share, and the frame's power. */
  shortHz: Float32Array
  shortShare: Float32Array
  shortPower: Float32Array
  shortBinHz: number
  /** 20 ms RMS every 5 ms. */
  envelope: Float32Array
  clicks: number
  clickSamples: number
}

export class ExcerptAnalyser {
  readonly sampleRate: number
  private readonly long: Spectra
  private readonly short: Spectra
  private readonly melEdges: number[]
  constructor(sampleRate: number) {
    this.sampleRate = sampleRate
    this.long = new Spectra(pow2Above(sampleRate * 0.17))
    this.short = new Spectra(pow2Near(sampleRate * 0.004))
    const top = Math.min(MEL_HIGH_HZ, sampleRate * 0.48)
    const lo = hzToMel(MEL_LOW_HZ)
    const hi = hzToMel(top)
    const binHz = sampleRate / this.long.size
    this.melEdges = Array.from({ length: MEL_BANDS + 1 }, (_, i) =>
      Math.round(melToHz(lo + ((hi - lo) * i) / MEL_BANDS) / binHz),
    )
  }

  measure(x: Float32Array, startSeconds: number): ExcerptMeasures {
    const fs = this.sampleRate
    const n = this.long.size
    const binHz = fs / n
    const frames: LongFrame[] = []
    const meanPower = new Float64Array(n / 2 + 1)
    for (let from = 0; from + n <= x.length; from += n / 2) {
      const p = this.long.of(x, from)
      addInto(meanPower, p)
      frames.push(this.longFrame(p, binHz, startSeconds + from / fs))
    }
    if (frames.length > 0) for (let k = 0; k < meanPower.length; k++) meanPower[k] /= frames.length
    const s = this.shortFrames(x)
    const { clicks, clickSamples } = findClicks(x, fs)
    return {
      seconds: x.length / fs,
      frames,
      meanPower,
      binHz,
      ...s,
      envelope: envelope(x, fs),
      clicks,
      clickSamples,
    }
  }

  private longFrame(p: Float64Array, binHz: number, at: number): LongFrame {
    let total = 0
    for (let k = 1; k < p.length; k++) total += p[k]
    const mel = new Float32Array(MEL_BANDS)
    for (let b = 0; b < MEL_BANDS; b++) {
      let s = 0
      const from = Math.max(1, this.melEdges[b])
      const to = Math.max(from + 1, this.melEdges[b + 1])
      for (let k = from; k < to && k < p.length; k++) s += p[k]
      mel[b] = 10 * Math.log10(s / (to - from) + 1e-20)
    }
    let best = 0
    const kFrom = Math.ceil(TONE_FROM_HZ / binHz)
    for (let k = kFrom; k < p.length - 2; k++) if (p[k] > p[best]) best = k
    const toneShare = total > 0 && best > 0 ? lobe(p, best, 3) / total : 0
    const { f0Hz, harmonicShare } = harmonicSeries(p, binHz, total)
    return { at, power: total, mel, toneHz: refine(p, best) * binHz, toneShare, f0Hz, harmonicShare }
  }

  private shortFrames(x: Float32Array) {
    const n = this.short.size
    const count = Math.floor(x.length / n)
    const shortHz = new Float32Array(count)
    const shortShare = new Float32Array(count)
    const shortPower = new Float32Array(count)
    const binHz = this.sampleRate / n
    const kFrom = Math.max(3, Math.ceil(500 / binHz))
    for (let f = 0; f < count; f++) {
      const p = this.short.of(x, f * n)
      let total = 0
      let best = kFrom
      for (let k = 1; k < p.length; k++) total += p[k]
      for (let k = kFrom; k < p.length - 1; k++) if (p[k] > p[best]) best = k
      shortPower[f] = total
      shortShare[f] = total > 0 ? lobe(p, best, 1) / total : 0
      shortHz[f] = refine(p, best) * binHz
    }
    return { shortHz, shortShare, shortPower, shortBinHz: binHz }
  }
}

/**
 * The fundamental (20–400 Hz, at least 4 bins) whose harmonics stand highest over the troughs
 * half-way between them (Σ P(h·f) − P((h+½)·f), h = 1..8): half the fundamental lands on troughs
 * for every second term and twice it lands troughs on odd harmonics, so neither wins. Its
 * harmonicity is the share of the power below 8.5·f0 held by the harmonics' lobes (±1 bin), above
 * what a flat spectrum would put there, scaled to 0..1.
 */
function harmonicSeries(p: Float64Array, binHz: number, total: number) {
  if (!(total > 0)) return { f0Hz: 0, harmonicShare: 0 }
  const at = (hz: number) => {
    const k = Math.round(hz / binHz)
    return k + 1 < p.length ? Math.max(p[k - 1], p[k], p[k + 1]) : 0
  }
  let f0 = 0
  let best = 0
  for (let f = Math.max(F0_FROM_HZ, 4 * binHz); f <= F0_TO_HZ; f += binHz / 2) {
    let s = 0
    for (let h = 1; h <= HARMONICS; h++) s += at(h * f) - at((h + 0.5) * f)
    if (s > best) {
      best = s
      f0 = f
    }
  }
  if (f0 === 0) return { f0Hz: 0, harmonicShare: 0 }
  const k0 = refine(p, Math.round(f0 / binHz))
  f0 = k0 * binHz
  let inLobes = 0
  let lobeBins = 0
  let below = 0
  const top = Math.min(p.length - 1, Math.round((8.5 * f0) / binHz))
  for (let k = 1; k <= top; k++) below += p[k]
  for (let h = 1; h <= HARMONICS; h++) {
    const k = Math.round((h * f0) / binHz)
    if (k + 1 > top) break
    inLobes += lobe(p, k, 1)
    lobeBins += 3
  }
  const flat = top > 0 ? lobeBins / top : 1
  const share = below > 0 ? inLobes / below : 0
  return { f0Hz: f0, harmonicShare: flat < 1 ? Math.max(0, (share - flat) / (1 - flat)) : 0 }
}

/** RMS over 20 ms windows every 5 ms (one 50 Hz period: mains ripple does not read as bursts). */
function envelope(x: Float32Array, fs: number): Float32Array {
  const win = Math.max(1, Math.round(fs * 0.02))
  const hop = Math.max(1, Math.round(fs * 0.005))
  const count = x.length >= win ? Math.floor((x.length - win) / hop) + 1 : 0
  const e = new Float32Array(count)
  const prefix = squaresPrefix(x)
  for (let j = 0; j < count; j++) e[j] = Math.sqrt((prefix[j * hop + win] - prefix[j * hop]) / win)
  return e
}

/** prefix[i] = Σ x[0..i)². */
function squaresPrefix(x: Float32Array): Float64Array {
  const prefix = new Float64Array(x.length + 1)
  for (let i = 0; i < x.length; i++) prefix[i + 1] = prefix[i] + x[i] * x[i]
  return prefix
}

/**
 * Clicks: runs of the first difference beyond 8× its robust spread (1.4826 × median |d|, the
 * Gaussian-equivalent σ: noise alone crosses it about once in 10^15 samples), runs closer than
 * 1 ms joined. Returns how many runs last at most 3 ms, and their samples.
 */
function findClicks(x: Float32Array, fs: number) {
  const n = x.length
  if (n < 3) return { clicks: 0, clickSamples: 0 }
  const stride = Math.max(1, Math.floor(n / 20000))
  // Every stride-th |difference| (i = stride, 2·stride, … < n), sorted for its median.
  const sample = new Float64Array(Math.floor((n - 1) / stride))
  const peak = sampleDifferences(x, stride, sample)
  sample.sort()
  const sigma = Math.max(1.4826 * sample[sample.length >> 1], peak * 1e-4, 1e-9)
  return countClicks(x, 8 * sigma, Math.round(fs * 0.001), Math.round(fs * 0.003))
}

/** The largest |x[i] − x[i−1]|; every stride-th one is written to `sample`. */
function sampleDifferences(x: Float32Array, stride: number, sample: Float64Array): number {
  let peak = 0
  let taken = 0
  for (let i = 1, n = x.length; i < n; i++) {
    const d = Math.abs(x[i] - x[i - 1])
    if (d > peak) peak = d
    if (i % stride === 0) sample[taken++] = d
  }
  return peak
}

/** Runs of |x[i] − x[i−1]| > limit, joined across gaps up to `gap`; those up to `longest` samples count. */
function countClicks(x: Float32Array, limit: number, gap: number, longest: number) {
  let clicks = 0
  let clickSamples = 0
  let runStart = -1
  let lastOver = -1
  for (let i = 1, n = x.length; i < n; i++) {
    if (Math.abs(x[i] - x[i - 1]) <= limit) continue
    if (runStart >= 0 && i - lastOver > gap) {
      const len = lastOver - runStart + 1
      if (len <= longest) {
        clicks++
        clickSamples += len
      }
    }
    if (runStart < 0 || i - lastOver > gap) runStart = i
    lastOver = i
  }
  if (runStart >= 0) {
    const len = lastOver - runStart + 1
    if (len <= longest) {
      clicks++
      clickSamples += len
    }
  }
  return { clicks, clickSamples }
}
