// Onsets of one-shots in decoded samples (pure; runs on a worker thread).
//
// Peak level in 1 ms hops: an onset is where the peak of the next 3 ms rises
// above the peak of the 20 ms before it by a threshold set by `sensitivity`,
// and stands that far above the range's floor (10th percentile of the hops'
// peaks). Peaks, not energy, so a one-sample click counts as much as a burst.
// The exact sample is the first one whose size exceeds the background by half
// the rise, moved back to the zero crossing before it (so a slice starts
// without a step). A slice ends where its energy decays back to the background
// (or 40 dB under its own loudest millisecond), or at the next onset, whichever
// comes first. Common practice for percussive material, tuned here on synthetic
// bursts and clicks (tests/audio/instrument-onsets.test.ts holds it against known
// times and aubioonset).
import { MIN_SELECTION_SECONDS } from '@shared/schemas/common'
import { nearestRisingCrossing } from '../render/zero-crossing'

export interface OnsetSliceFrames {
  start: number
  end: number
  /** Largest |sample| within the slice (on any channel when `peaks` are given). */
  peak: number
}

export interface OnsetOptions {
  sampleRate: number
  /** 0–1: higher finds softer onsets. */
  sensitivity?: number
  /** Per-hop largest |sample| over all channels (as `hopPeaks` makes them): detection and reported peaks use them, so channels of opposite polarity do not cancel; default: from `x`. */
  peaks?: Float32Array
}

export const HOP_SECONDS = 0.001
const AHEAD_HOPS = 3
const BEFORE_HOPS = 20
const MIN_GAP_SECONDS = 0.03
/** A proposal is kept only if it can be saved as a region (the shortest one the schemas accept). */
const MIN_SLICE_SECONDS = MIN_SELECTION_SECONDS
/** A slice is at least this long unless the next onset comes first: a one-shot needs room to ring. */
const SHORTEST_SLICE_SECONDS = MIN_SELECTION_SECONDS
const DECAY_DB = 40
/** Half a period of 50 Hz hum, the usual background: a crossing is nearly always this close. */
const CROSSING_SEARCH_SECONDS = 0.01
/** A rising crossing (as loops use) is preferred when it is this close. */
const RISING_PREFERRED_SECONDS = 0.002

export const hopFrames = (sampleRate: number) => Math.max(1, Math.round(sampleRate * HOP_SECONDS))

/** Rise of the peak level in dB an onset needs: 20 dB at sensitivity 0, 4 dB at 1 (default 12 dB). */
export const riseThresholdDb = (sensitivity = 0.5) => 4 + 16 * (1 - Math.min(1, Math.max(0, sensitivity)))

const db = (energy: number) => 10 * Math.log10(energy + 1e-20)

function quantileDb(values: number[], q: number): number {
  values.sort((a, b) => a - b)
  return values[Math.min(values.length - 1, Math.floor(values.length * q))]
}

/** Largest |sample| over all channels per hop. */
export function hopPeaks(channels: Float32Array[], hop: number): Float32Array {
  const n = channels[0]?.length ?? 0
  const out = new Float32Array(Math.ceil(n / hop))
  for (const ch of channels) {
    for (let i = 0; i < n; i++) {
      const a = Math.abs(ch[i])
      const h = (i / hop) | 0
      if (a > out[h]) out[h] = a
    }
  }
  return out
}

/**
 * The zero crossing at or before `at` (x[i−1] and x[i] on different sides of zero): a rising one
 * within `risingWindow` frames, else the nearest of either direction within `window`; else `at`.
 */
export function precedingCrossing(x: Float32Array, at: number, window: number, risingWindow = 0): number {
  const rising = nearestRisingCrossing(x, 0, at, Math.max(1, at - risingWindow), at)
  if (rising !== null) return rising
  for (let i = at, lo = Math.max(1, at - window); i >= lo; i--) if (x[i - 1] < 0 !== x[i] < 0) return i
  return at
}

export function detectOnsets(x: Float32Array, opts: OnsetOptions): OnsetSliceFrames[] {
  const sr = opts.sampleRate
  const hop = hopFrames(sr)
  const hops = Math.floor(x.length / hop)
  if (hops < BEFORE_HOPS + AHEAD_HOPS) return []
  // Mean square per hop and its prefix sums, for window means in O(1).
  const cum = new Float64Array(hops + 1)
  for (let h = 0; h < hops; h++) {
    let s = 0
    for (let i = h * hop, e = i + hop; i < e; i++) s += x[i] * x[i]
    cum[h + 1] = cum[h] + s / hop
  }
  const mean = (from: number, to: number) =>
    (cum[Math.min(hops, to)] - cum[Math.max(0, from)]) / Math.max(1, Math.min(hops, to) - Math.max(0, from))
  const floorDb = quantileDb(
    Array.from({ length: hops }, (_, h) => db(cum[h + 1] - cum[h])),
    0.1,
  )
  // Peaks of any channel when given: channels of opposite polarity do not cancel out of the detection.
  const own = opts.peaks ?? hopPeaks([x], hop)
  const maxPeak = (from: number, to: number) => {
    let m = 0
    for (let h = Math.max(0, from); h < Math.min(hops, to); h++) m = Math.max(m, own[h])
    return m
  }
  const peakDb = (from: number, to: number) => 20 * Math.log10(maxPeak(from, to) + 1e-10)
  const floorPeakDb = quantileDb(
    Array.from({ length: hops }, (_, h) => 20 * Math.log10(own[h] + 1e-10)),
    0.1,
  )
  const rise = riseThresholdDb(opts.sensitivity)
  const minGap = Math.round(MIN_GAP_SECONDS / HOP_SECONDS)

  // Onset hops: the first hop of each run where the rise is met, at least minGap hops apart.
  const onsetHops: number[] = []
  let last = -Infinity
  let inRun = false
  for (let h = 1; h + AHEAD_HOPS <= hops; h++) {
    const now = peakDb(h, h + AHEAD_HOPS)
    const hit = now - peakDb(h - BEFORE_HOPS, h) >= rise && now - floorPeakDb >= rise
    if (hit && !inRun && h - last >= minGap) {
      onsetHops.push(h)
      last = h
    }
    inRun = hit
  }

  const crossingWindow = Math.round(CROSSING_SEARCH_SECONDS * sr)
  const starts = onsetHops.map((h) => {
    // First sample that stands out from the background by half the rise.
    const level = Math.max(maxPeak(h - BEFORE_HOPS, h) * 10 ** (rise / 40), 1e-6)
    let at = h * hop
    for (let i = Math.max(0, (h - 1) * hop), e = Math.min(x.length, (h + AHEAD_HOPS) * hop); i < e; i++) {
      if (Math.abs(x[i]) >= level) {
        at = i
        break
      }
    }
    return {
      hop: h,
      frame: precedingCrossing(x, at, crossingWindow, Math.round(RISING_PREFERRED_SECONDS * sr)),
      backgroundDb: db(mean(h - BEFORE_HOPS, h)),
    }
  })

  const slices: OnsetSliceFrames[] = []
  const minSlice = Math.round(MIN_SLICE_SECONDS * sr)
  for (let k = 0; k < starts.length; k++) {
    const s = starts[k]
    const limitHop = k + 1 < starts.length ? starts[k + 1].hop : hops
    const limitFrame = k + 1 < starts.length ? starts[k + 1].frame : x.length
    // The loudest hop, then the first hop after it that has decayed to the background.
    let loudHop = s.hop
    let loudDb = -Infinity
    for (let h = s.hop; h < Math.min(limitHop, s.hop + 50); h++) {
      const d = db(mean(h, h + 1))
      if (d > loudDb) {
        loudDb = d
        loudHop = h
      }
    }
    const quiet = Math.max(s.backgroundDb + 3, floorDb + 3, loudDb - DECAY_DB)
    let endHop = limitHop
    for (let h = loudHop + 1; h < limitHop; h++) {
      if (db(mean(h, h + AHEAD_HOPS)) <= quiet) {
        endHop = h + AHEAD_HOPS
        break
      }
    }
    const end = Math.min(
      limitFrame,
      x.length,
      Math.max(endHop * hop, s.frame + Math.round(SHORTEST_SLICE_SECONDS * sr)),
    )
    if (end - s.frame < minSlice) continue
    let peak = 0
    for (let h = Math.floor(s.frame / hop); h < Math.ceil(end / hop) && h < own.length; h++)
      peak = Math.max(peak, own[h])
    slices.push({ start: s.frame, end, peak })
  }
  return slices
}
