// High-accuracy true peak: the largest |s(t)| of the band-limited signal s that
// the samples describe, found with a long windowed-sinc interpolator (64 taps,
// Kaiser window β = 9, tabulated at 1024 positions between two samples), not
// with the 4× Annex 2 filter of ITU-R BS.1770-4. The Annex figure can be off by
// about −0.5/+0.25 dB on single tones (its four phases ripple; 4× points can
// miss a crest by cos(π·f / 4fs)); this one agrees with a brute-force 32×
// windowed-sinc oversampler to within 0.01 dB on tones up to 20 kHz at 48 kHz
// (tests/audio/true-peak-precise.test.ts). It is what a ceiling is enforced with
// (pack renders, the "over the ceiling" flag); the Annex figure stays the
// reported "true peak (BS.1770)".
//
// Cost is kept down by screening: the Annex 2 meter (the WebAssembly kernel,
// which this meter runs and whose figure it also reports) tells, per 256-sample
// stretch, whether its Annex peak comes within SCREEN_DB of the best precise
// peak so far; only such stretches are searched: the largest samples and the
// Annex outputs beside them locate the crests, and the best few are refined on
// the sinc interpolator (parabolic steps down to 1/1024 of a sample). Before the
// first sample and after the last the signal is taken as silence, as a
// converter would play it.
import { TRUE_PEAK_PHASES, TruePeakMeter, type ChunkExtremes } from './true-peak'

const HALF = 32 // taps on each side
const PHASES = 1024
const BETA = 9
const STRETCH = 256
const HEAD = HALF + 12 // samples kept before a stretch: the sinc's reach and the Annex history
/** How far below the best peak so far a stretch's Annex peak may be and still be searched (dB): the Annex 4× points miss a crest by at most cos(π·f / 4fs) (0.47 dB at 20 kHz, 48 kHz) plus 0.3 dB of ripple. */
const SCREEN_DB = 1.0
const SCREEN = 10 ** (-SCREEN_DB / 20)
/** Crests refined per stretch, best Annex value first. */
const CRESTS = 4

function besselI0(x: number): number {
  let sum = 1
  let term = 1
  for (let k = 1; k < 50; k++) {
    term *= (x / (2 * k)) ** 2
    sum += term
    if (term < 1e-17 * sum) break
  }
  return sum
}

/** TABLE[p · 2·HALF + j]: the weight of sample n − HALF + 1 + j for s(n + p / PHASES). */
const TABLE = (() => {
  const t = new Float64Array((PHASES + 1) * 2 * HALF)
  const norm = besselI0(BETA)
  for (let p = 0; p <= PHASES; p++) {
    const frac = p / PHASES
    for (let j = 0; j < 2 * HALF; j++) {
      const u = frac - (j - HALF + 1) // t − sample position
      const z = u / HALF
      const w = Math.abs(z) < 1 ? besselI0(BETA * Math.sqrt(1 - z * z)) / norm : 0
      const sinc = u === 0 ? 1 : Math.sin(Math.PI * u) / (Math.PI * u)
      t[p * 2 * HALF + j] = sinc * w
    }
  }
  return t
})()

// BS.1770-4 Annex 2 phases 0 and 1 (phases 2 and 3 are their mirror images). From samples
// x[n − 5 .. n + 6], phase m lands at n + (2m + 1) / 8: between sample n and the next.
const PHASE_0 = TRUE_PEAK_PHASES[0]
const PHASE_1 = TRUE_PEAK_PHASES[1]

/** s(t) at t = n + p / PHASES (n an index of x, 0 ≤ p ≤ PHASES), from x[n − HALF + 1 .. n + HALF]. */
function sincAt(x: Float32Array, n: number, p: number): number {
  const row = p * 2 * HALF
  const first = n - HALF + 1
  let s = 0
  for (let j = 0; j < 2 * HALF; j++) s += TABLE[row + j] * x[first + j]
  return s
}

/** |s| at a position in 1/PHASES steps from the start of x. */
function magnitudeAt(x: Float32Array, pos: number): number {
  const n = Math.floor(pos / PHASES)
  return Math.abs(sincAt(x, n, pos - n * PHASES))
}

/**
 * Largest |s(t)| near position `centre` (in 1/PHASES units): steps of 1/16 sample, then of 1/256,
 * each ending on the vertex of a parabola through the best three points. The walk uphill is capped at a few steps per level: a crest is within
 * 1/8 sample of where the Annex outputs put it, and where a slow signal's crest is wide and flat
 * (so the start can be far from its top), the samples there already hold its height.
 */
function refine(x: Float32Array, centre: number): number {
  let step = PHASES / 16
  let best = centre
  let bestValue = magnitudeAt(x, centre)
  while (step >= 1) {
    for (let walk = 0; walk < 4; walk++) {
      const left = magnitudeAt(x, best - step)
      const right = magnitudeAt(x, best + step)
      if (left > bestValue && left >= right) {
        best -= step
        bestValue = left
        continue
      }
      if (right > bestValue) {
        best += step
        bestValue = right
        continue
      }
      // best is a local maximum at this step: the vertex of the parabola through the three points.
      const d = left - 2 * bestValue + right
      if (d < 0) {
        const offset = Math.round((0.5 * (left - right) * step) / d)
        if (offset !== 0 && Math.abs(offset) < step) {
          const v = magnitudeAt(x, best + offset)
          if (v > bestValue) {
            best += offset
            bestValue = v
          }
        }
      }
      break
    }
    step = step > 4 ? 4 : 0 // 1/16 sample, then 1/256 with the parabola's last step: ample below 20 kHz
  }
  return bestValue
}

interface Candidate {
  /** Absolute frame range of the stretch. */
  from: number
  to: number
  /** Its Annex peak (or the threshold it was screened at). */
  annex: number
}

/** Per-channel high-accuracy true peak, with the Annex 2 figure beside it (linear; 1.0 = full scale). */
export class PreciseTruePeakMeter {
  readonly annex: TruePeakMeter
  private readonly channels: number
  private readonly peaks: Float64Array
  /** Per channel: the last samples (absolute frame bufStart on), enough for the pending stretches and their context, in buffers[ch][0 .. lengths[ch]). */
  private readonly buffers: Float32Array[]
  private readonly lengths: number[]
  private bufStart = -HEAD
  private position = 0
  private readonly pending: Candidate[][]
  private readonly thresholds: Float64Array
  private out: Float64Array[] = []
  private readonly crestPos = new Float64Array(CRESTS)
  private readonly crestVal = new Float64Array(CRESTS)
  /** The largest Annex value refineNearSamples looked at (refined or not). */
  private seen = 0

  constructor(channels: number) {
    this.channels = channels
    this.annex = new TruePeakMeter(channels)
    this.peaks = new Float64Array(channels)
    this.thresholds = new Float64Array(channels)
    this.buffers = Array.from({ length: channels }, () => new Float32Array(HEAD)) // silence before the take
    this.lengths = Array.from({ length: channels }, () => HEAD)
    this.pending = Array.from({ length: channels }, () => [])
  }

  /** With `extremes`, the lows and highs of the block's 4-frame chunks are handed back too (see TruePeakMeter.pushScreened). */
  push(planar: Float32Array[], extremes?: ChunkExtremes): void {
    const frames = planar[0]?.length ?? 0
    if (frames === 0) return
    const stretches = Math.ceil(frames / STRETCH)
    if ((this.out[0]?.length ?? 0) < stretches)
      this.out = Array.from({ length: this.channels }, () => new Float64Array(stretches))
    for (let ch = 0; ch < this.channels; ch++) this.thresholds[ch] = this.peaks[ch] * SCREEN
    this.annex.pushScreened(planar, this.thresholds, STRETCH, this.out, extremes)
    const keepFrom = this.position + frames - (STRETCH + HALF + HEAD)
    for (let ch = 0; ch < this.channels; ch++) {
      const o = this.out[ch]
      const t = this.thresholds[ch]
      for (let s = 0; s < stretches; s++) {
        if (o[s] > t)
          this.pending[ch].push({
            from: this.position + s * STRETCH,
            to: Math.min(this.position + frames, this.position + (s + 1) * STRETCH),
            annex: o[s],
          })
      }
      // The kept samples stay at the front of a reused store; the block goes after them (one copy, no allocation once the store is big enough).
      const kept = this.lengths[ch]
      let store = this.buffers[ch]
      if (store.length < kept + frames) {
        const grown = new Float32Array(kept + frames)
        grown.set(store.subarray(0, kept), 0)
        store = this.buffers[ch] = grown
      }
      store.set(planar[ch], kept)
      const work = store.subarray(0, kept + frames) // a view of exactly the valid samples: reads past them stay undefined, as before
      this.searchPending(ch, work, this.bufStart, this.position + frames)
      const drop = keepFrom > this.bufStart ? keepFrom - this.bufStart : 0
      if (drop > 0) store.copyWithin(0, drop, kept + frames)
      this.lengths[ch] = kept + frames - drop
    }
    this.position += frames
    if (keepFrom > this.bufStart) this.bufStart = keepFrom
  }

  /** Searches what is left, with silence after the last sample. */
  finish(): void {
    for (let ch = 0; ch < this.channels; ch++) {
      const old = this.buffers[ch].subarray(0, this.lengths[ch])
      const work = new Float32Array(old.length + HALF + 1)
      work.set(old, 0)
      this.searchPending(ch, work, this.bufStart, Infinity)
      this.pending[ch].length = 0
    }
  }

  /** High-accuracy true peak of a channel (linear). Call finish() first. */
  peak(channel: number): number {
    return this.peaks[channel]
  }

  /** Searches the pending stretches of a channel whose sinc taps all lie before `available`. */
  private searchPending(ch: number, work: Float32Array, start: number, available: number): void {
    const list = this.pending[ch]
    let peak = this.peaks[ch]
    let kept = 0
    for (const c of list) {
      if (c.to + HALF > available) {
        list[kept++] = c
        continue
      }
      const threshold = peak * SCREEN
      if (c.annex <= threshold) continue
      const from = c.from - start
      const to = c.to - start
      for (let i = from; i < to; i++) {
        const a = Math.abs(work[i])
        if (a > peak) peak = a
      }
      // Crests near the largest samples first; when the stretch's Annex peak was not among the Annex
      // outputs looked at there, the crest lies elsewhere (a high, narrow lobe between smaller
      // samples): walk every output of the stretch.
      let found = this.refineNearSamples(work, from, to, threshold * SCREEN, peak)
      if (this.seen < c.annex * (1 - 1e-9)) found = Math.max(found, this.refineStretch(work, from, to, threshold))
      if (found > peak) peak = found
    }
    list.length = kept
    this.peaks[ch] = peak
  }

  /** The Annex output at n + (2m + 1) / 8 (between sample n and the next), absolute. */
  private static between(x: Float32Array, n: number, m: number): number {
    let s = 0
    if (m === 0) for (let k = 0; k < 12; k++) s += PHASE_0[k] * x[n + 6 - k]
    else if (m === 1) for (let k = 0; k < 12; k++) s += PHASE_1[k] * x[n + 6 - k]
    else if (m === 2) for (let j = 0; j < 12; j++) s += PHASE_1[j] * x[n - 5 + j]
    else for (let j = 0; j < 12; j++) s += PHASE_0[j] * x[n - 5 + j]
    return Math.abs(s)
  }

  /** Refines around the CRESTS largest local maxima of |x| in [from, to), starting at the best Annex point beside each. */
  private refineNearSamples(x: Float32Array, from: number, to: number, floor: number, peak: number): number {
    const pos = this.crestPos
    const val = this.crestVal
    val.fill(0)
    for (let n = from; n < to; n++) {
      const v = Math.abs(x[n])
      if (v < floor || v < Math.abs(x[n - 1]) || v < Math.abs(x[n + 1])) continue
      let weakest = 0
      for (let c = 1; c < CRESTS; c++) if (val[c] < val[weakest]) weakest = c
      if (v > val[weakest]) {
        val[weakest] = v
        pos[weakest] = n
      }
    }
    let best = 0
    this.seen = 0
    for (let c = 0; c < CRESTS; c++) {
      if (val[c] === 0) continue
      const n = pos[c]
      let start = n * 8
      let startValue = val[c]
      for (let k = n - 1; k <= n; k++) {
        for (let m = 0; m < 4; m++) {
          const v = PreciseTruePeakMeter.between(x, k, m)
          if (v > startValue) {
            startValue = v
            start = k * 8 + 2 * m + 1
          }
        }
      }
      if (startValue > this.seen) this.seen = startValue
      // A crest whose Annex value, raised by the most the Annex can miss, cannot beat the best: skip it.
      if (startValue <= Math.max(peak, best) * SCREEN) continue
      best = Math.max(best, refine(x, (start * PHASES) / 8))
    }
    return best
  }

  /** Finds the crests of the Annex 4× outputs above the threshold in [from, to) and refines the best few. */
  private refineStretch(x: Float32Array, from: number, to: number, threshold: number): number {
    const pos = this.crestPos
    const val = this.crestVal
    val.fill(0)
    const between = PreciseTruePeakMeter.between
    // Walk the values in order (sample, four outputs, sample…), positions in eighths of a sample;
    // each value is looked at once the next is known. In one loop, not a closure: numbers a closure
    // updates live on the heap, one allocation per value.
    let prev2 = between(x, from - 1, 3)
    let prev = Math.abs(x[from])
    let prevAt = from * 8
    for (let n = from; n < to; n++) {
      for (let m = 0; m <= 4; m++) {
        const v = m < 4 ? between(x, n, m) : Math.abs(x[n + 1])
        if (prev >= threshold && prev >= prev2 && prev >= v) {
          let weakest = 0
          for (let c = 1; c < CRESTS; c++) if (val[c] < val[weakest]) weakest = c
          if (prev > val[weakest]) {
            val[weakest] = prev
            pos[weakest] = prevAt
          }
        }
        prev2 = prev
        prev = v
        prevAt = m < 4 ? n * 8 + 2 * m + 1 : (n + 1) * 8
      }
    }
    let best = 0
    for (let c = 0; c < CRESTS; c++) if (val[c] > 0) best = Math.max(best, refine(x, (pos[c] * PHASES) / 8))
    return best
  }
}
