// CPU-heavy work asked for by API requests (spectrograms, pack item previews and
// quick exports, the range measurement when an item is added to a pack, the
// instrument and modulation tasks) runs on the one audio-task pool
// (server/work/audio-tasks.ts), never on the API's event loop. This layer adds
// admission per member: each may have at most `perUser` tasks running or
// waiting (spectrograms counted apart from the rest), and one more answers 429,
// so one member cannot fill the queue for everybody. The pool's size is the concurrency limit; tasks beyond it wait.
import type { SpectrogramOptions } from '../audio/spectrogram'
import type { LevelReading } from '../render/level-meter'
import type { PlainRenderRequest, RenderRequest, RenderResult } from '../render/render'
import type { ModulationFile, ModulationOrder } from '../modulation/modulation-files'
import type { LoopTask, OnsetTask, SplitTask } from '../instrument/instrument-task'
import type { SplitSegmentFrames } from '../instrument/split'
import type { SplitCopyResult, SplitCopyTask } from '../instrument/split-copy'
import type { LoopCycleTask } from '../instrument/loop-cycle'
import type { LoopFrames } from '../instrument/loops'
import type { OnsetSliceFrames } from '../instrument/onsets'
import type { RangeFrames } from '../audio/range-frames'
import { runAudioTask } from '../work/audio-tasks'
import { AppError } from './errors'

export interface HeavyWork {
  spectrogram(who: string, path: string, opts: SpectrogramOptions): Promise<Buffer>
  render(who: string, req: RenderRequest, outPath: string): Promise<RenderResult>
  measure(who: string, path: string, startSeconds: number | null, endSeconds: number | null): Promise<LevelReading>
  modulation(who: string, path: string, order: ModulationOrder): Promise<ModulationFile>
  /** Mel frames of a region the analysis's excerpts missed (server/similar/). */
  rangeFrames(who: string, path: string, startSeconds: number, endSeconds: number): Promise<RangeFrames>
  /** The instrument tools' proposals (server/instrument/). */
  onsets(who: string, task: OnsetTask): Promise<OnsetSliceFrames[]>
  loops(who: string, task: LoopTask): Promise<LoopFrames[]>
  /** Where a sweep falls apart into takes, and the copies of those ranges. */
  split(who: string, task: SplitTask): Promise<SplitSegmentFrames[]>
  splitCopy(who: string, task: SplitCopyTask): Promise<SplitCopyResult[]>
  /** One cycle of a loop as WAV bytes, for the bench's loop audition. */
  loopCycle(who: string, task: LoopCycleTask): Promise<Buffer>
}

export interface HeavyWorkOptions {
  /** Tasks one member may have running or waiting at once. */
  perUser?: number
}

export const HEAVY_PER_USER = 3

export function createHeavyWork(opts: HeavyWorkOptions = {}): HeavyWork {
  const perUser = opts.perUser ?? HEAVY_PER_USER
  const busy = new Map<string, number>()

  async function limited<T>(who: string, work: () => Promise<T>): Promise<T> {
    const n = busy.get(who) ?? 0
    if (n >= perUser) {
      throw new AppError(
        429,
        'TOO_BUSY',
        `You already have ${n} images, renders, proposals or control curves being made; wait for them to finish and try again`,
        { limit: perUser },
      )
    }
    busy.set(who, n + 1)
    try {
      return await work()
    } finally {
      const left = (busy.get(who) ?? 1) - 1
      if (left > 0) busy.set(who, left)
      else busy.delete(who)
    }
  }

  return {
    // Pictures have an allowance of their own: zooming the bench asks for several at once, and that must never
    // leave a member's "add to pack" or export answering 429 behind them.
    spectrogram: (who, path, o) =>
      limited(`${who}:pictures`, async () => {
        const bytes = await runAudioTask('spectrogram', { path, opts: o })
        return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength)
      }),
    render: (who, req, outPath) =>
      limited(who, () => {
        const { onFrames: _f, shouldStop: _s, sourceInfo: _i, ...plain } = req
        return runAudioTask('render', { req: plain satisfies PlainRenderRequest, outPath })
      }),
    measure: (who, path, startSeconds, endSeconds) =>
      limited(who, () => runAudioTask('measure', { path, startSeconds, endSeconds })),
    modulation: (who, path, order) => limited(who, () => runAudioTask('modulation', { path, order })),
    rangeFrames: (who, path, startSeconds, endSeconds) =>
      limited(who, () => runAudioTask('range-frames', { path, startSeconds, endSeconds })),
    onsets: (who, task) => limited(who, () => runAudioTask('onsets', task)),
    loops: (who, task) => limited(who, () => runAudioTask('loops', task)),
    split: (who, task) => limited(who, () => runAudioTask('split', task)),
    splitCopy: (who, task) => limited(who, () => runAudioTask('split-copy', task)),
    loopCycle: (who, task) =>
      limited(who, async () => {
        const bytes = await runAudioTask('loop-cycle', task)
        return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength)
      }),
  }
}
