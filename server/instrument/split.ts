// Where a sweep (one long recording passing the coil over one device after
// another) falls apart into takes: pure arithmetic over the per-frame features
// of split-features.ts. Two kinds of boundary:
//   pause   the level stays near the recording's noise floor for a moment
//           (the recordist lifted the coil);
//   change  the spectrum's character changes abruptly (a new device under the
//           coil, no pause between): the mean band levels of the half second
//           before and after differ by more than a threshold, at a local
//           maximum of that difference.
import type { SplitFeatures } from './split-features'

export type SplitReason = 'pause' | 'change'

export interface SplitSegmentFrames {
  /** Sample frames of the take, end exclusive. */
  start: number
  end: number
  confidence: number
  reason: SplitReason
}

export interface SplitOptions {
  minSegmentSeconds: number
  /** 0..1, default 0.5: higher finds shorter pauses and subtler changes. */
  sensitivity?: number
}

/** Half a second each side: long enough that bursts, crackle and gating average out. */
const CHANGE_WINDOW_S = 0.5
/** A change needs at least this much material on each side to be judged. */
const CHANGE_MIN_SIDE_S = 0.2
/** Band levels are compared down to 60 dB below the strongest band (below that is noise, not character). */
const BAND_RANGE = 1e-6

interface Boundary {
  /** Frame index (feature frames) where the left part ends. */
  leftEnd: number
  /** Frame index where the right part starts (equal to leftEnd for a change). */
  rightStart: number
  reason: SplitReason
  confidence: number
}

const db = (p: number) => 10 * Math.log10(p + 1e-20)

function percentile(values: Float32Array | number[], p: number): number {
  const s = Array.from(values).sort((a, b) => a - b)
  return s.length ? s[Math.min(s.length - 1, Math.max(0, Math.round((s.length - 1) * p)))] : -200
}

/** Quiet stretches at least `minFrames` long, as [from, to) frame ranges, with their depth below the median. */
function findPauses(f: SplitFeatures, sensitivity: number, minFrames: number) {
  const level = Array.from(f.power, db)
  const floor = percentile(level, 0.03)
  const median = percentile(level, 0.5)
  // A recording that never falls 20 dB below its median level has no pauses to find.
  if (median - floor < 20) return { pauses: [] as [number, number][], depth: 0 }
  const threshold = Math.min(floor + 4 + 8 * sensitivity, median - 20)
  const pauses: [number, number][] = []
  let from = -1
  for (let k = 0; k <= f.count; k++) {
    const q = k < f.count && level[k] < threshold
    if (q && from < 0) from = k
    if (!q && from >= 0) {
      if (k - from >= minFrames) pauses.push([from, k])
      from = -1
    }
  }
  return { pauses, depth: median - floor }
}

/** Sliding band sums over [from, to) of one active stretch. */
class BandWindow {
  readonly sum: Float64Array
  n = 0
  constructor(
    private readonly f: SplitFeatures,
    private from: number,
    private to: number,
  ) {
    this.sum = new Float64Array(f.bands)
    for (let k = from; k < to; k++) this.add(k, 1)
  }
  private add(k: number, sign: number) {
    const b = this.f.bands
    for (let j = 0; j < b; j++) this.sum[j] += sign * this.f.bandPower[k * b + j]
    this.n += sign
  }
  /** Moves the window to [from, to), both ends only forward. */
  moveTo(from: number, to: number) {
    while (this.to < to) this.add(this.to++, 1)
    while (this.from < from) this.add(this.from++, -1)
  }
}

/** Mean absolute difference of the two windows' band levels in dB, over bands within 60 dB of the strongest. */
function bandDistance(a: BandWindow, b: BandWindow): number {
  let top = 0
  for (let j = 0; j < a.sum.length; j++) top = Math.max(top, a.sum[j] / a.n, b.sum[j] / b.n)
  if (top <= 0) return 0
  const eps = top * BAND_RANGE
  let d = 0
  for (let j = 0; j < a.sum.length; j++) d += Math.abs(db(a.sum[j] / a.n + eps) - db(b.sum[j] / b.n + eps))
  return d / a.sum.length
}

/** Change boundaries inside one active stretch [a, b): local maxima of the band distance above the threshold. */
function findChanges(f: SplitFeatures, a: number, b: number, threshold: number, spacing: number): Boundary[] {
  const hopS = f.hop / f.sampleRate
  const w = Math.max(2, Math.round(CHANGE_WINDOW_S / hopS))
  const side = Math.max(2, Math.round(CHANGE_MIN_SIDE_S / hopS))
  if (b - a < 2 * side) return []
  const first = a + side
  const left = new BandWindow(f, Math.max(a, first - w), first)
  const right = new BandWindow(f, first, Math.min(b, first + w))
  const dist = new Float32Array(b - a)
  for (let k = first; k <= b - side; k++) {
    left.moveTo(Math.max(a, k - w), k)
    right.moveTo(k, Math.min(b, k + w))
    dist[k - a] = bandDistance(left, right)
  }
  // Greedy: strongest first, none closer than `spacing` to a stronger one.
  const order = Array.from(dist.keys())
    .filter((i) => dist[i] >= threshold)
    .sort((x, y) => dist[y] - dist[x])
  const kept: number[] = []
  for (const i of order) if (kept.every((j) => Math.abs(j - i) >= spacing)) kept.push(i)
  return kept.map((i) => ({
    leftEnd: a + i,
    rightStart: a + i,
    reason: 'change' as const,
    confidence: Math.min(1, dist[i] / (2 * threshold)),
  }))
}

/** Proposed takes of a sweep, in sample frames; empty when nothing splits it. */
export function proposeSplits(f: SplitFeatures, opts: SplitOptions): SplitSegmentFrames[] {
  const s = Math.min(1, Math.max(0, opts.sensitivity ?? 0.5))
  const hopS = f.hop / f.sampleRate
  const minPauseFrames = Math.max(1, Math.round((0.6 - 0.4 * s) / hopS))
  const minSegFrames = Math.max(1, Math.round(opts.minSegmentSeconds / hopS))
  const changeThreshold = 10 - 6 * s
  const { pauses, depth } = findPauses(f, s, minPauseFrames)
  const pauseConfidence = (p: [number, number]) =>
    Math.min(1, 0.5 + 0.5 * Math.min(1, (p[1] - p[0]) / (2 * minPauseFrames)) * Math.min(1, depth / 40))

  // Active stretches between pauses, then change boundaries inside each.
  const stretches: [number, number][] = []
  let at = 0
  for (const p of pauses) {
    if (p[0] > at) stretches.push([at, p[0]])
    at = p[1]
  }
  if (at < f.count) stretches.push([at, f.count])
  // Parts: each stretch split at its changes; each part remembers the boundary before and after it.
  type Part = { from: number; to: number; before: Boundary | null; after: Boundary | null }
  let parts: Part[] = []
  for (let i = 0; i < stretches.length; i++) {
    const [a, b] = stretches[i]
    const pauseBefore = pauses.find((p) => p[1] === a)
    const pauseAfter = pauses.find((p) => p[0] === b)
    const pb = pauseBefore
      ? { leftEnd: pauseBefore[0], rightStart: a, reason: 'pause' as const, confidence: pauseConfidence(pauseBefore) }
      : null
    const pa = pauseAfter
      ? { leftEnd: b, rightStart: pauseAfter[1], reason: 'pause' as const, confidence: pauseConfidence(pauseAfter) }
      : null
    const changes = findChanges(f, a, b, changeThreshold, minSegFrames).sort((x, y) => x.leftEnd - y.leftEnd)
    let from = a
    let before: Boundary | null = pb
    for (const c of changes) {
      parts.push({ from, to: c.leftEnd, before, after: c })
      from = c.rightStart
      before = c
    }
    parts.push({ from, to: b, before, after: pa })
  }

  // Parts shorter than the minimum: merged across their weaker change, or dropped when pauses bound them.
  for (;;) {
    const i = parts.findIndex((p) => p.to - p.from < minSegFrames)
    if (i < 0) break
    const p = parts[i]
    const prev = p.before?.reason === 'change' ? parts[i - 1] : null
    const next = p.after?.reason === 'change' ? parts[i + 1] : null
    if (!prev && !next) {
      parts.splice(i, 1)
      continue
    }
    if (prev && (!next || p.before!.confidence <= p.after!.confidence)) {
      prev.to = p.to
      prev.after = p.after
      parts.splice(i, 1)
    } else {
      next!.from = p.from
      next!.before = p.before
      parts.splice(i, 1)
    }
  }
  parts = parts.filter((p) => p.to > p.from)
  if (parts.length < 2) return []
  const total = f.frames
  return parts.map((p) => {
    const why = p.before ?? p.after!
    return {
      start: Math.min(total, p.from * f.hop),
      end: Math.min(total, p.to * f.hop),
      reason: why.reason,
      confidence: Math.round(why.confidence * 100) / 100,
    }
  })
}
