// Loudness per ITU-R BS.1770-4 and EBU Tech 3341/3342, fed block by block.
//
// The K-weighted signal is reduced to the weighted energy of 100 ms
// sub-blocks. A momentary block (400 ms, 75 % overlap per BS.1770-4) is the
// last 4 sub-blocks, a short-term block (3 s, updated at 10 Hz per EBU Tech
// 3342) the last 30. Only complete blocks count: a take shorter than 400 ms has
// no momentary or integrated value, one shorter than 3 s no short-term value
// and no loudness range (EBU Tech 3341 §2.2: short-term needs a 3 s window).
// Gated blocks go to fixed-size histograms, so memory does not grow with length.
import type { Loudness } from '@shared/schemas/analysis'
import { preFilter, rlbHighPass } from './k-weighting'
import { LevelHistogram } from './level-histogram'

const ABSOLUTE_GATE = -70
const INTEGRATED_RELATIVE_GATE = -10
const RANGE_RELATIVE_GATE = -20
const MOMENTARY_SUBBLOCKS = 4
const SHORT_TERM_SUBBLOCKS = 30
// Keeps the recursive filter states away from subnormal numbers during digital
// silence (slow on x86); the RLB high-pass removes this constant entirely.
const DENORMAL_GUARD = 1e-20

export interface LoudnessOptions {
  sampleRate: number
  channels: number
  weights: number[]
  /** Called every 100 ms with the end time of a complete momentary block. */
  onMomentary?: (endSeconds: number, lufs: number | null) => void
  /** Called every 100 ms with the end time of a complete short-term block. */
  onShortTerm?: (endSeconds: number, lufs: number | null) => void
}

export function powerToLufs(power: number): number | null {
  if (!(power > 0)) return null
  return -0.691 + 10 * Math.log10(power)
}

export class LoudnessMeter {
  private readonly opts: LoudnessOptions
  private readonly c: Float64Array // b0 b1 b2 a1 a2 of stage 1, then a1 a2 of stage 2
  private readonly state: Float64Array // 4 per channel
  private readonly activeChannels: number[] // channels with a non-zero weight (LFE is skipped)
  private readonly subEnergy = new Float64Array(SHORT_TERM_SUBBLOCKS)
  private readonly subFrames = new Float64Array(SHORT_TERM_SUBBLOCKS)
  private subCount = 0
  private currentEnergy = 0
  private currentFrames = 0
  private position = 0
  private nextBoundary: number
  private readonly momentary = new LevelHistogram(ABSOLUTE_GATE, 20)
  private readonly shortTerm = new LevelHistogram(ABSOLUTE_GATE, 20)
  private maxMomentary = -Infinity
  private maxShortTerm = -Infinity

  constructor(opts: LoudnessOptions) {
    this.opts = opts
    const s1 = preFilter(opts.sampleRate)
    const s2 = rlbHighPass(opts.sampleRate)
    this.c = Float64Array.of(s1.b0, s1.b1, s1.b2, s1.a1, s1.a2, s2.a1, s2.a2)
    this.state = new Float64Array(4 * opts.channels)
    this.activeChannels = opts.weights.map((w, ch) => (w === 0 ? -1 : ch)).filter((ch) => ch >= 0)
    this.nextBoundary = this.boundary(1)
  }

  // Sub-block k ends at round(k · fs / 10), so rates that are not multiples of 10 Hz stay exact on average.
  private boundary(k: number): number {
    return Math.round((k * this.opts.sampleRate) / 10)
  }

  push(planar: Float32Array[]): void {
    const frames = planar[0]?.length ?? 0
    const active = this.activeChannels
    let offset = 0
    while (offset < frames) {
      const end = Math.min(frames, offset + (this.nextBoundary - this.position))
      // Channels go through the filters two at a time: two independent recursions keep the CPU busy.
      let k = 0
      for (; k + 1 < active.length; k += 2) {
        const a = active[k]
        const b = active[k + 1]
        this.currentEnergy += this.filterPair(a, b, planar[a], planar[b], offset, end)
      }
      if (k < active.length) {
        const a = active[k]
        this.currentEnergy += this.filterPair(a, -1, planar[a], planar[a], offset, end)
      }
      this.currentFrames += end - offset
      this.position += end - offset
      offset = end
      if (this.position === this.nextBoundary) this.completeSubBlock()
    }
  }

  /**
   * Runs both K-weighting stages over x[from..to) of channels a and b (b = −1: only a) and returns
   * the weighted energy of the outputs.
   */
  private filterPair(a: number, b: number, xa: Float32Array, xb: Float32Array, from: number, to: number): number {
    const c = this.c
    const b0 = c[0], b1 = c[1], b2 = c[2], a1 = c[3], a2 = c[4], c1 = c[5], c2 = c[6]
    const st = this.state
    const oa = 4 * a
    const ob = b < 0 ? oa : 4 * b
    let z1 = st[oa], z2 = st[oa + 1], w1 = st[oa + 2], w2 = st[oa + 3]
    let q1 = st[ob], q2 = st[ob + 1], r1 = st[ob + 2], r2 = st[ob + 3]
    let ea = 0
    let eb = 0
    for (let i = from; i < to; i++) {
      // Transposed direct form II, stage 1 (shelf) then stage 2 (high-pass, numerator 1 −2 1).
      const v = xa[i] + DENORMAL_GUARD
      const y = b0 * v + z1
      z1 = b1 * v - a1 * y + z2
      z2 = b2 * v - a2 * y
      const u = y + w1
      w1 = -2 * y - c1 * u + w2
      w2 = y - c2 * u
      ea += u * u
      const p = xb[i] + DENORMAL_GUARD
      const g = b0 * p + q1
      q1 = b1 * p - a1 * g + q2
      q2 = b2 * p - a2 * g
      const t = g + r1
      r1 = -2 * g - c1 * t + r2
      r2 = g - c2 * t
      eb += t * t
    }
    st[oa] = z1
    st[oa + 1] = z2
    st[oa + 2] = w1
    st[oa + 3] = w2
    if (b < 0) return this.opts.weights[a] * ea
    st[ob] = q1
    st[ob + 1] = q2
    st[ob + 2] = r1
    st[ob + 3] = r2
    return this.opts.weights[a] * ea + this.opts.weights[b] * eb
  }

  private completeSubBlock(): void {
    const slot = this.subCount % SHORT_TERM_SUBBLOCKS
    this.subEnergy[slot] = this.currentEnergy
    this.subFrames[slot] = this.currentFrames
    this.subCount++
    this.currentEnergy = 0
    this.currentFrames = 0
    this.nextBoundary = this.boundary(this.subCount + 1)
    const endSeconds = this.position / this.opts.sampleRate
    if (this.subCount >= MOMENTARY_SUBBLOCKS) {
      const power = this.windowPower(MOMENTARY_SUBBLOCKS)
      const level = powerToLufs(power)
      this.record(this.momentary, level, power)
      if (level !== null && level > this.maxMomentary) this.maxMomentary = level
      this.opts.onMomentary?.(endSeconds, level)
    }
    if (this.subCount >= SHORT_TERM_SUBBLOCKS) {
      const power = this.windowPower(SHORT_TERM_SUBBLOCKS)
      const level = powerToLufs(power)
      this.record(this.shortTerm, level, power)
      if (level !== null && level > this.maxShortTerm) this.maxShortTerm = level
      this.opts.onShortTerm?.(endSeconds, level)
    }
  }

  private windowPower(subBlocks: number): number {
    let energy = 0
    let frames = 0
    for (let k = 1; k <= subBlocks; k++) {
      const slot = (this.subCount - k) % SHORT_TERM_SUBBLOCKS
      energy += this.subEnergy[slot]
      frames += this.subFrames[slot]
    }
    return energy / frames
  }

  // The absolute gate (BS.1770-4 §2.8: blocks must exceed −70 LUFS) is applied on entry.
  private record(h: LevelHistogram, level: number | null, power: number): void {
    if (level !== null && level > ABSOLUTE_GATE) h.add(level, power)
  }

  finish(): Loudness {
    return {
      integratedLufs: this.integrated(),
      loudnessRangeLu: this.range(),
      maxMomentaryLufs: this.maxMomentary > ABSOLUTE_GATE ? this.maxMomentary : null,
      maxShortTermLufs: this.maxShortTerm > ABSOLUTE_GATE ? this.maxShortTerm : null,
    }
  }

  /** BS.1770-4 §2.8: mean of blocks above −70 LUFS and above (their mean − 10 LU). */
  private integrated(): number | null {
    const ungated = powerToLufs(this.momentary.meanPowerAbove(null).power)
    if (ungated === null) return null
    const gated = this.momentary.meanPowerAbove(ungated + INTEGRATED_RELATIVE_GATE)
    return gated.count > 0 ? powerToLufs(gated.power) : null
  }

  /** EBU Tech 3342 §3: spread between the 10th and 95th percentiles of gated short-term values. */
  private range(): number | null {
    const ungated = powerToLufs(this.shortTerm.meanPowerAbove(null).power)
    if (ungated === null) return null
    const gate = ungated + RANGE_RELATIVE_GATE
    const low = this.shortTerm.percentile(0.1, gate)
    const high = this.shortTerm.percentile(0.95, gate)
    return low === null || high === null ? null : high - low
  }
}
