// Loudness per ITU-R BS.1770-4 and EBU Tech 3341/3342, fed block by block.
//
// The K-weighted signal is reduced to the weighted energy of 5 ms sub-blocks
// (sub-block k ends at round(k · fs / 200)). Two uses of the same energies:
// - Maximum momentary (400 ms) and short-term (3 s) loudness are looked for at
//   every sub-block, a hop of 5 ms, so a burst that starts anywhere is missed
//   by at most 2.5 ms of its length (0.03 LU for a 400 ms burst); EBU Tech 3341
//   cases 10 and 13 check exactly this.
// - The 10 Hz series that BS.1770-4 (gating blocks, 75 % overlap) and EBU Tech
//   3342 (loudness range) define are the windows that end every 100 ms, as
//   before; they are kept (BlockSeries, 16 bytes per 100 ms) so the gates are
//   decided block by block and the integrated loudness is the exact mean of the
//   gated blocks' powers, and the range's percentiles come from sorted values.
// Only complete blocks count: a take shorter than 400 ms has no momentary or
// integrated value, one shorter than 3 s no short-term value and no loudness
// range (EBU Tech 3341 §2.2: short-term needs a 3 s window). A take shorter
// than 400 ms gets the short-sound loudness instead (see shortSoundLufs).
import type { Loudness } from '@shared/schemas/analysis'
import { preFilter, rlbHighPass } from './k-weighting'
import { BlockSeries } from './block-series'
import { WASM_BASE64 } from './wasm/k-weighting.wasm'
import { instantiate, type KernelInstance } from './wasm/instance'

const ABSOLUTE_GATE = -70
const INTEGRATED_RELATIVE_GATE = -10
const RANGE_RELATIVE_GATE = -20
const SUBBLOCKS_PER_SECOND = 200
const MOMENTARY_SUBBLOCKS = 80 // 400 ms
const SHORT_TERM_SUBBLOCKS = 600 // 3 s
const SERIES_SUBBLOCKS = 20 // the 10 Hz series of BS.1770-4 and EBU Tech 3342
/** Below this duration a take gets the short-sound loudness (one momentary block). */
export const SHORT_SOUND_SECONDS = 0.4

export interface LoudnessResult extends Loudness {
  /** K-weighted loudness over the whole sound, for sounds shorter than 400 ms; null otherwise. */
  shortSoundLufs: number | null
}

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
  if (samplesView.buffer !== buffer || samplesView.length < samples)
    samplesView = new Float32Array(buffer, kKernel.base + IO_BYTES, samples)
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
  // Ring of the last 600 sub-blocks' energies, and running sums of the last 80 and 600 (made exact
  // again every 100 ms, so rounding cannot build up).
  private readonly subEnergy = new Float64Array(SHORT_TERM_SUBBLOCKS)
  private momentarySum = 0
  private shortTermSum = 0
  private subCount = 0
  private currentEnergy = 0
  private totalEnergy = 0
  private position = 0
  private nextBoundary: number
  private readonly momentary = new BlockSeries()
  private readonly shortTerm = new BlockSeries()
  private maxMomentaryPower = 0
  private maxShortTermPower = 0

  constructor(opts: LoudnessOptions) {
    this.opts = opts
    const s1 = preFilter(opts.sampleRate)
    const s2 = rlbHighPass(opts.sampleRate)
    this.c = Float64Array.of(s1.b0, s1.b1, s1.b2, s1.a1, s1.a2, s2.a1, s2.a2)
    this.state = new Float64Array(4 * opts.channels)
    this.activeChannels = opts.weights.map((w, ch) => (w === 0 ? -1 : ch)).filter((ch) => ch >= 0)
    this.nextBoundary = this.boundary(1)
  }

  // Sub-block k ends at round(k · fs / 200), so rates that are not multiples of 200 Hz stay exact on average.
  private boundary(k: number): number {
    return Math.round((k * this.opts.sampleRate) / SUBBLOCKS_PER_SECOND)
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
    const k = this.subCount
    const slot = k % SHORT_TERM_SUBBLOCKS
    const e = this.currentEnergy
    const leavingShort = k >= SHORT_TERM_SUBBLOCKS ? this.subEnergy[slot] : 0
    const leavingMomentary =
      k >= MOMENTARY_SUBBLOCKS ? this.subEnergy[(k - MOMENTARY_SUBBLOCKS) % SHORT_TERM_SUBBLOCKS] : 0
    this.subEnergy[slot] = e
    this.subCount = k + 1
    this.totalEnergy += e
    this.currentEnergy = 0
    this.nextBoundary = this.boundary(this.subCount + 1)
    const onSeries = this.subCount % SERIES_SUBBLOCKS === 0
    if (onSeries) {
      this.momentarySum = this.windowEnergy(MOMENTARY_SUBBLOCKS)
      this.shortTermSum = this.windowEnergy(SHORT_TERM_SUBBLOCKS)
    } else {
      this.momentarySum += e - leavingMomentary
      this.shortTermSum += e - leavingShort
    }
    if (this.subCount >= MOMENTARY_SUBBLOCKS) {
      const power = Math.max(0, this.momentarySum) / this.windowFrames(MOMENTARY_SUBBLOCKS)
      if (power > this.maxMomentaryPower) this.maxMomentaryPower = power
      if (onSeries) {
        if (power > 0 && powerToLufs(power)! > ABSOLUTE_GATE) this.momentary.push(power)
        this.opts.onMomentary?.(this.position / this.opts.sampleRate, powerToLufs(power))
      }
    }
    if (this.subCount >= SHORT_TERM_SUBBLOCKS) {
      const power = Math.max(0, this.shortTermSum) / this.windowFrames(SHORT_TERM_SUBBLOCKS)
      if (power > this.maxShortTermPower) this.maxShortTermPower = power
      if (onSeries) {
        if (power > 0 && powerToLufs(power)! > ABSOLUTE_GATE) this.shortTerm.push(power)
        this.opts.onShortTerm?.(this.position / this.opts.sampleRate, powerToLufs(power))
      }
    }
  }

  private windowEnergy(subBlocks: number): number {
    let energy = 0
    for (let j = 1; j <= Math.min(subBlocks, this.subCount); j++)
      energy += this.subEnergy[(this.subCount - j) % SHORT_TERM_SUBBLOCKS]
    return energy
  }

  private windowFrames(subBlocks: number): number {
    return this.boundary(this.subCount) - this.boundary(this.subCount - subBlocks)
  }

  finish(): LoudnessResult {
    const level = (p: number) => {
      const l = powerToLufs(p)
      return l !== null && l > ABSOLUTE_GATE ? l : null
    }
    // Short-sound loudness: all the K-weighted energy over the sound's own length (partial sub-block
    // included), with the same −70 LUFS absolute gate as a block: below it there is nothing to measure.
    const frames = this.position
    const short =
      frames > 0 && frames < SHORT_SOUND_SECONDS * this.opts.sampleRate
        ? level((this.totalEnergy + this.currentEnergy) / frames)
        : null
    return {
      integratedLufs: this.integrated(),
      loudnessRangeLu: this.range(),
      maxMomentaryLufs: level(this.maxMomentaryPower),
      maxShortTermLufs: level(this.maxShortTermPower),
      shortSoundLufs: short,
    }
  }

  /**
   * BS.1770-4 §2.8: the mean power of the blocks above −70 LUFS (absolute gate, applied on entry)
   * and above that mean − 10 LU, each block compared exactly.
   */
  private integrated(): number | null {
    const blocks = this.momentary.view()
    const ungated = powerToLufs(mean(blocks, 0))
    if (ungated === null) return null
    const gate = lufsToPower(ungated + INTEGRATED_RELATIVE_GATE)
    let sum = 0
    let n = 0
    for (const p of blocks) {
      if (p > gate) {
        sum += p
        n++
      }
    }
    return n > 0 ? powerToLufs(sum / n) : null
  }

  /**
   * EBU Tech 3342 §3: spread between the 10th and 95th percentiles (nearest rank, the value at sorted
   * index round((n − 1) · p)) of the short-term values above −70 LUFS and above their mean − 20 LU.
   */
  private range(): number | null {
    const blocks = this.shortTerm.view()
    const ungated = powerToLufs(mean(blocks, 0))
    if (ungated === null) return null
    const gate = lufsToPower(ungated + RANGE_RELATIVE_GATE)
    const kept = blocks.filter((p) => p > gate).sort()
    if (kept.length === 0) return null
    const at = (p: number) => powerToLufs(kept[Math.round((kept.length - 1) * p)])!
    return at(0.95) - at(0.1)
  }
}

function mean(values: Float64Array, above: number): number {
  let sum = 0
  let n = 0
  for (const v of values) {
    if (v > above) {
      sum += v
      n++
    }
  }
  return n > 0 ? sum / n : 0
}

function lufsToPower(lufs: number): number {
  return 10 ** ((lufs + 0.691) / 10)
}
