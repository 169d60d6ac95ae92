// Sample-domain levels per channel: sample peak, RMS (plain mathematical
// convention: a full-scale sine reads −3.01 dBFS), DC offset and clipping.
//
// Clipping rule: a sample is at the format's limit when |x| ≥ 1 − 1 LSB of the
// file's valid bits (that is, the largest positive code or the most negative
// one) or, for float files, when |x| is exactly 1.0 (what a clipper writes).
// Clipped samples are those in runs of two or more consecutive samples at the
// limit, of the same polarity, in one channel: a single sample touching full
// scale is a peak, a flat top is a clip. A float file can hold samples beyond
// full scale without clipping them; those are counted apart, as "over full
// scale" (|x| > 1.0), and are never called clipped.

import { CHUNK, type BlockScan } from './block-scan'

export interface LevelsOptions {
  channels: number
  encoding: 'pcm' | 'float'
  validBitsPerSample: number
  /** Samples arrive multiplied by this (float-64 files beyond the float-32 range); full scale is this. */
  scale?: number
}

export interface ChannelTotals {
  peak: number
  sum: number
  sumSquares: number
  frames: number
  clipped: number
  /** The longest flat run at full scale, in samples (0 when nothing clipped). */
  longestClip: number
  overFullScale: number
}

export function fullScaleThreshold(encoding: 'pcm' | 'float', validBits: number): number {
  return encoding === 'float' ? 1 : 1 - 2 ** -(validBits - 1)
}

export class LevelsMeter {
  private readonly channels: number
  private readonly threshold: number
  private readonly peak: Float64Array
  private readonly sum: Float64Array
  private readonly sumSquares: Float64Array
  private readonly clipped: Float64Array
  private readonly longestClip: Float64Array
  private readonly over: Float64Array
  private readonly float: boolean
  private readonly limit: number
  private readonly run: Float64Array // signed length of the current full-scale run (+ top, − bottom)
  private frames = 0

  constructor(opts: LevelsOptions) {
    this.channels = opts.channels
    this.limit = opts.scale ?? 1
    this.threshold = fullScaleThreshold(opts.encoding, opts.validBitsPerSample) * this.limit
    this.peak = new Float64Array(opts.channels)
    this.sum = new Float64Array(opts.channels)
    this.sumSquares = new Float64Array(opts.channels)
    this.clipped = new Float64Array(opts.channels)
    this.longestClip = new Float64Array(opts.channels)
    this.over = new Float64Array(opts.channels)
    this.float = opts.encoding === 'float'
    this.run = new Float64Array(opts.channels)
  }

  /** Adds a block, given the summaries of its scan (see block-scan.ts). */
  add(planar: Float32Array[], scan: BlockScan): void {
    const t = this.threshold
    for (let ch = 0; ch < this.channels; ch++) {
      const m = largestMagnitude(scan.lo[ch], scan.hi[ch], scan.chunks)
      if (m > this.peak[ch]) this.peak[ch] = m
      // Full scale is rare: only a block that reaches it is walked chunk by chunk (clipsInBlock).
      if (m >= t) this.clipsInBlock(ch, planar[ch], scan)
      else if (scan.chunks > 0) this.run[ch] = 0
      this.sum[ch] += scan.sum[ch]
      this.sumSquares[ch] += scan.sumSquares[ch]
    }
    this.frames += scan.frames
  }

  /** Looks sample by sample at the chunks of the block that reach full scale; a chunk that does not ends any run. */
  private clipsInBlock(ch: number, x: Float32Array, scan: BlockScan): void {
    const lo = scan.lo[ch]
    const hi = scan.hi[ch]
    for (let c = 0; c < scan.chunks; c++) {
      if (Math.max(hi[c], -lo[c]) >= this.threshold)
        this.scanClips(ch, x, c * CHUNK, Math.min(scan.frames, (c + 1) * CHUNK))
      else this.run[ch] = 0
    }
  }

  private scanClips(ch: number, x: Float32Array, from: number, to: number): void {
    const t = this.threshold
    let run = this.run[ch]
    let clipped = this.clipped[ch]
    for (let i = from; i < to; i++) {
      const v = x[i]
      if (this.float && Math.abs(v) > this.limit) {
        this.over[ch]++
        run = 0
      } else if (Math.abs(v) >= t) {
        const sign = v > 0 ? 1 : -1
        if (run * sign > 0) {
          run += sign
          // The second sample of a run also counts its first.
          clipped += run * sign === 2 ? 2 : 1
          if (run * sign > this.longestClip[ch]) this.longestClip[ch] = run * sign
        } else run = sign
      } else run = 0
    }
    this.run[ch] = run
    this.clipped[ch] = clipped
  }

  totals(channel: number): ChannelTotals {
    return {
      peak: this.peak[channel],
      sum: this.sum[channel],
      sumSquares: this.sumSquares[channel],
      frames: this.frames,
      clipped: this.clipped[channel],
      longestClip: this.longestClip[channel],
      overFullScale: this.over[channel],
    }
  }
}

/** max over chunks c < chunks of max(hi[c], −lo[c]); 0 for none. */
function largestMagnitude(lo: Float32Array, hi: Float32Array, chunks: number): number {
  let peak = 0
  for (let c = 0; c < chunks; c++) {
    const m = Math.max(hi[c], -lo[c])
    peak = m > peak ? m : peak
  }
  return peak
}
