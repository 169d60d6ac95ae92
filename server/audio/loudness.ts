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
import { WASM_BASE64 } from './wasm/k-weighting.wasm'
import { instantiate, type KernelInstance } from './wasm/instance'

const ABSOLUTE_GATE = -70
const INTEGRATED_RELATIVE_GATE = -10
const RANGE_RELATIVE_GATE = -20
const MOMENTARY_SUBBLOCKS = 4
const SHORT_TERM_SUBBLOCKS = 30

export interface LoudnessOptions {
  sampleRate: number
  channels: number
  weights: number[]
  /** Called every 100 ms with the end time of a complete momentary block. */
  onMomentary?: (endSeconds: number, lufs: number | null) => void
  /** Called every 100 ms with the end time of a complete short-term block. */
  onShortTerm?: (endSeconds: number, lufs: number | null) => void
}

interface KKernel {
  memory: WebAssembly.Memory
  filterPair(xa: number, xb: number, from: number, to: number, io: number): void
}

// The K-weighting kernel of this thread: 18 f64 of coefficients, state and energies at its base
// (see wasm/k-weighting.as.ts), then the samples of the block being pushed.
let kKernel: KernelInstance<KKernel> | null = null
let ioView = new Float64Array(0)
let samplesView = new Float32Array(0)
const IO_BYTES = 256

/** Grows the scratch for `samples` f32 after the io area; returns the byte offset of the samples. */
function kernelScratch(samples: number): number {
  kKernel ??= instantiate<KKernel>(WASM_BASE64)
  const buffer = kKernel.scratch(IO_BYTES + samples * 4)
  if (ioView.buffer !== buffer) ioView = new Float64Array(buffer, kKernel.base, 18)
  if (samplesView.buffer !== buffer || samplesView.length < samples) samplesView = new Float32Array(buffer, kKernel.base + IO_BYTES, samples)
  return kKernel.base + IO_BYTES
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
    if (frames === 0) return
    const active = this.activeChannels
    // The block's weighted channels go to the kernel's memory once; segments are offsets into it.
    const samplesAt = kernelScratch(frames * this.opts.channels)
    const at = (ch: number) => samplesAt + ch * frames * 4
    for (const ch of active) samplesView.set(planar[ch], ch * frames)
    let offset = 0
    while (offset < frames) {
      const end = Math.min(frames, offset + (this.nextBoundary - this.position))
      // Channels go through the filters two at a time (one per SIMD lane).
      let k = 0
      for (; k + 1 < active.length; k += 2) {
        const a = active[k]
        const b = active[k + 1]
        this.currentEnergy += this.filterPair(a, b, at(a), at(b), offset, end)
      }
      if (k < active.length) {
        const a = active[k]
        this.currentEnergy += this.filterPair(a, -1, at(a), at(a), offset, end)
      }
      this.currentFrames += end - offset
      this.position += end - offset
      offset = end
      if (this.position === this.nextBoundary) this.completeSubBlock()
    }
  }

  /**
   * Runs both K-weighting stages over x[from..to) of channels a and b (b = −1: only a) and returns
   * the weighted energy of the outputs. The filters run in WebAssembly (wasm/k-weighting.as.ts),
   * the two channels side by side in SIMD lanes; the samples were copied there by push().
   */
  private filterPair(a: number, b: number, xa: number, xb: number, from: number, to: number): number {
    const k = kKernel!
    const io = ioView
    const st = this.state
    const oa = 4 * a
    const ob = b < 0 ? oa : 4 * b
    io.set(this.c, 0)
    for (let j = 0; j < 4; j++) {
      io[8 + j] = st[oa + j]
      io[12 + j] = st[ob + j]
    }
    k.exports.filterPair(xa, xb, from, to, k.base)
    for (let j = 0; j < 4; j++) st[oa + j] = io[8 + j]
    if (b < 0) return this.opts.weights[a] * io[16]
    for (let j = 0; j < 4; j++) st[ob + j] = io[12 + j]
    return this.opts.weights[a] * io[16] + this.opts.weights[b] * io[17]
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
