// Noise floor, per channel, the way a recordist reads it off a meter: the
// level the channel sits at in its quiet passages.
//
// Definition: each channel is cut into consecutive 50 ms windows; a window's
// level is the RMS of its samples after removing the window's own mean (so a DC
// offset, and drift slower than about 20 Hz, do not count as noise). Windows of
// pure digital zero (before a take starts, after an edit) are left out. The
// channel's floor is the 10th percentile (nearest rank) of its window levels.
// - A channel is silent (dead) when no window reaches −100 dBFS: it is reported
//   as such and left out of the take's floor.
// - A channel is continuous when its 10th percentile is within 6 dB of its
//   95th: its quiet passages are as loud as its loud ones (a drone, steady
//   noise), so it has no noise floor to speak of, only its steady level.
// The take's floor is the highest floor among its live channels that fall
// quiet (the noisiest channel is the one heard); null when none does, and then
// `continuous` says why. Levels are binned at 0.01 dB, so memory does not grow
// with the take. The sums come from the shared block scan in 4-frame chunks, so
// a window ends on the first chunk boundary at or after its 50 ms mark (within 3
// frames; the window's own frame count is used for its mean). A trailing partial
// window is used only when the take is shorter than one window.
import type { NoiseFloor } from '@shared/schemas/analysis'
import { CHUNK, type BlockScan } from './block-scan'
import { LevelHistogram } from './level-histogram'

const WINDOW_SECONDS = 0.05
const PERCENTILE = 0.1
const SILENT_DBFS = -100
const CONTINUOUS_DB = 6

export interface ChannelFloor {
  dbfs: number | null
  silent: boolean
  continuous: boolean
}

export interface NoiseFloorResult {
  noiseFloor: NoiseFloor
  channels: ChannelFloor[]
}

export class NoiseFloorMeter {
  private readonly sampleRate: number
  private readonly channels: number
  private readonly histograms: LevelHistogram[]
  private readonly loudest: Float64Array
  private readonly sum: Float64Array
  private readonly energy: Float64Array
  private windows = 0
  private position = 0
  private nextBoundary: number
  private frames = 0

  constructor(sampleRate: number, channels: number) {
    this.sampleRate = sampleRate
    this.channels = channels
    this.histograms = Array.from({ length: channels }, () => new LevelHistogram(-240, 40))
    this.loudest = new Float64Array(channels).fill(-Infinity)
    this.sum = new Float64Array(channels)
    this.energy = new Float64Array(channels)
    this.nextBoundary = this.boundary(1)
  }

  private boundary(k: number): number {
    return Math.max(1, Math.round(k * WINDOW_SECONDS * this.sampleRate))
  }

  /** Adds a block's per-channel chunk sums (see block-scan.ts). */
  add(scan: BlockScan): void {
    const channels = this.channels
    let c = 0
    while (c < scan.chunks) {
      // Chunks up to the window's end (the first chunk boundary at or past it), channel by channel.
      // Only the block's last chunk can be partial, so the count follows from the frames still wanted.
      const wanted = Math.max(0, Math.ceil((this.nextBoundary - this.position) / CHUNK))
      const end = Math.min(scan.chunks, c + wanted)
      const frames = Math.min(end * CHUNK, scan.frames) - c * CHUNK
      for (let ch = 0; ch < channels; ch++) {
        const cs = scan.chunkSum[ch]
        const ce = scan.chunkEnergy[ch]
        let s = 0
        let e = 0
        for (let k = c; k < end; k++) {
          s += cs[k]
          e += ce[k]
        }
        this.sum[ch] += s
        this.energy[ch] += e
      }
      this.frames += frames
      this.position += frames
      c = end
      if (this.position >= this.nextBoundary) {
        this.closeWindow()
        this.windows++
        this.nextBoundary = this.boundary(this.windows + 1)
      }
    }
  }

  private closeWindow(): void {
    const n = this.frames
    for (let ch = 0; ch < this.channels; ch++) {
      const e = this.energy[ch]
      // Digital zero says nothing about the recording chain; a constant (DC only) window is as quiet as can be.
      if (e > 0 && Number.isFinite(e)) {
        const mean = this.sum[ch] / n
        const meanSquare = Math.max(0, e / n - mean * mean)
        const level = meanSquare > 0 ? 10 * Math.log10(meanSquare) : -240
        this.histograms[ch].add(level, meanSquare)
        if (level > this.loudest[ch]) this.loudest[ch] = level
      }
      this.sum[ch] = 0
      this.energy[ch] = 0
    }
    this.frames = 0
  }

  finish(): NoiseFloorResult {
    if (this.windows === 0 && this.frames > 0) this.closeWindow()
    const channels: ChannelFloor[] = this.histograms.map((h, ch) => {
      const p10 = h.percentile(PERCENTILE)
      const loud = h.percentile(0.95)
      const silent = p10 === null || this.loudest[ch] < SILENT_DBFS
      const continuous = !silent && loud !== null && p10! >= loud - CONTINUOUS_DB
      return { dbfs: silent || continuous ? null : p10, silent, continuous }
    })
    const live = channels.filter((c) => !c.silent)
    const quiet = live.filter((c) => c.dbfs !== null).map((c) => c.dbfs!)
    const dbfs = quiet.length > 0 ? Math.max(...quiet) : null
    return { noiseFloor: { dbfs, continuous: live.length > 0 && quiet.length === 0 }, channels }
  }
}
