// Noise floor: the 10th percentile (nearest rank) of the RMS levels of
// consecutive 50 ms windows, each window's RMS taken over all samples of all
// channels together. Windows of pure digital zero (before a take starts, after
// an edit) are ignored: they say nothing about the recording chain. A trailing
// partial window is used only when the take is shorter than one window.
// Levels are binned at 0.01 dB, so memory does not grow with the take. The
// sums of squares come from the levels pass (Meter splits blocks at window
// boundaries), so the samples are not read twice.
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

  /** Frames left in the current window: the caller splits blocks there. */
  framesToBoundary(): number {
    return this.nextBoundary - this.position
  }

  /** Adds the Σx² over all channels of `frames` frames that do not cross a window boundary. */
  add(frames: number, energy: number): void {
    this.energy += energy
    this.frames += frames
    this.position += frames
    if (this.position === this.nextBoundary) {
      this.closeWindow()
      this.windows++
      this.nextBoundary = this.boundary(this.windows + 1)
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
