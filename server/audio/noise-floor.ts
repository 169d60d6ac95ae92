// Noise floor: the 10th percentile (nearest rank) of the RMS levels of
// consecutive 50 ms windows, each window's RMS taken over all samples of all
// channels together. Windows of pure digital zero (before a take starts, after
// an edit) are ignored: they say nothing about the recording chain. A trailing
// partial window is used only when the take is shorter than one window.
// Levels are binned at 0.01 dB, so memory does not grow with the take. The
// sums of squares come from the shared block scan in 4-frame chunks, so a
// window ends on the first chunk boundary at or after its 50 ms mark (within
// 3 frames; the window's own frame count is used for its mean).
import { CHUNK, type BlockScan } from './block-scan'
import { LevelHistogram } from './level-histogram'

const WINDOW_SECONDS = 0.05
const PERCENTILE = 0.1

export class NoiseFloorMeter {
  private readonly sampleRate: number
  private readonly channels: number
  private readonly histogram = new LevelHistogram(-240, 40)
  private windows = 0
  private position = 0
  private nextBoundary: number
  private energy = 0
  private frames = 0

  constructor(sampleRate: number, channels: number) {
    this.sampleRate = sampleRate
    this.channels = channels
    this.nextBoundary = this.boundary(1)
  }

  private boundary(k: number): number {
    return Math.max(1, Math.round(k * WINDOW_SECONDS * this.sampleRate))
  }

  /** Adds a block's per-chunk energies (Σx² over all channels, see block-scan.ts). */
  add(scan: BlockScan): void {
    const e = scan.energy
    for (let c = 0; c < scan.chunks; c++) {
      const frames = Math.min(CHUNK, scan.frames - c * CHUNK)
      this.energy += e[c]
      this.frames += frames
      this.position += frames
      if (this.position >= this.nextBoundary) {
        this.closeWindow()
        this.windows++
        this.nextBoundary = this.boundary(this.windows + 1)
      }
    }
  }

  private closeWindow(): void {
    const meanSquare = this.energy / (this.frames * this.channels)
    if (meanSquare > 0 && Number.isFinite(meanSquare)) this.histogram.add(10 * Math.log10(meanSquare), meanSquare)
    this.energy = 0
    this.frames = 0
  }

  /** dBFS (plain RMS convention), or null when every window was digital zero. */
  finish(): number | null {
    if (this.windows === 0 && this.frames > 0) this.closeWindow()
    return this.histogram.percentile(PERCENTILE)
  }
}
