// Every kind of CPU-heavy audio task, with what it takes and what it answers.
// Types only: the API side imports this without loading any audio code; the
// worker entry (audio-worker.ts) holds the implementations.
import type { AnalyzeResult } from '../audio/analyze'
import type { SpectrogramOptions } from '../audio/spectrogram'
import type { LevelReading } from '../render/level-meter'
import type { PlainRenderRequest, RenderResult } from '../render/render'
import type { ModulationFile, ModulationOrder } from '../modulation/modulation-files'
import type { LoopTask, OnsetTask, SplitTask } from '../instrument/instrument-task'
import type { SplitSegmentFrames } from '../instrument/split'
import type { SplitCopyResult, SplitCopyTask } from '../instrument/split-copy'
import type { LoopCycleTask } from '../instrument/loop-cycle'
import type { LoopFrames } from '../instrument/loops'
import type { OnsetSliceFrames } from '../instrument/onsets'
import type { BuildAnswer, BuildOrder } from '../packs/builds/build-writer'
import type { RangeFrames } from '../audio/range-frames'

/** Input and output of each kind; `progress` says what the numbers passed to onProgress mean. */
export interface AudioTasks {
  /** Measures a whole take and writes its peaks overview. Progress: fraction 0..1. */
  analyze: { input: { path: string; peaksPath?: string }; output: AnalyzeResult }
  /** Renders one pack item to a file (previews, quick exports, the items of a build). Progress: frames written. */
  render: { input: { req: PlainRenderRequest; outPath: string }; output: RenderResult }
  /** A take's or an excerpt's spectrogram, as PNG bytes. */
  spectrogram: { input: { path: string; opts: SpectrogramOptions }; output: Uint8Array }
  /** Loudness and true peak of a range of a take (an item added to a pack). */
  measure: { input: { path: string; startSeconds: number | null; endSeconds: number | null }; output: LevelReading }
  /** Mel frames of a stretch the analysis's excerpts missed (a region's sounds-like vector). */
  'range-frames': { input: { path: string; startSeconds: number; endSeconds: number }; output: RangeFrames }
  /** A take's control curve as a csv, wav or MIDI file (server/modulation/). */
  modulation: { input: { path: string; order: ModulationOrder }; output: ModulationFile }
  /** The instrument tools' proposals (server/instrument/). */
  onsets: { input: OnsetTask; output: OnsetSliceFrames[] }
  loops: { input: LoopTask; output: LoopFrames[] }
  /** Where a sweep falls apart into takes. */
  split: { input: SplitTask; output: SplitSegmentFrames[] }
  /** Sample-exact copies of ranges of a take, each a file of its own. */
  'split-copy': { input: SplitCopyTask; output: SplitCopyResult[] }
  /** One cycle of a loop (crossfaded) as a small WAV for the bench to play round. */
  'loop-cycle': { input: LoopCycleTask; output: Uint8Array }
  /**
   * Writes a pack build's zip; its items are rendered as `render` tasks on other threads of the same
   * pool while this one writes the zip. Progress: fraction 0..1 of the frames to render.
   */
  'pack-build': { input: BuildOrder; output: BuildAnswer }
}

export type AudioTaskKind = keyof AudioTasks
export type AudioTaskInput<K extends AudioTaskKind> = AudioTasks[K]['input']
export type AudioTaskOutput<K extends AudioTaskKind> = AudioTasks[K]['output']
