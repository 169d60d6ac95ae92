// CPU-heavy work asked for by API requests (spectrograms, pack item previews and
// quick exports, the range measurement when an item is added to a pack) runs
// here, never on the API's event loop: on worker threads of one render pool
// (render-pool.ts) started on heavy-worker.ts. The pool's size is the
// concurrency limit (tasks beyond it wait their turn); each user may have at
// most `perUser` tasks running or waiting, and one more answers 429, so one
// member cannot fill the queue for everybody.
import { availableParallelism } from 'node:os'
import type { SpectrogramOptions } from '../audio/spectrogram'
import type { LevelReading } from '../render/level-meter'
import type { PlainRenderRequest, RenderRequest, RenderResult } from '../render/render'
import { createRenderPool, type RenderPool } from '../render/render-pool'
import type { ModulationFile, ModulationOrder } from '../modulation/modulation-files'
import type { LoopTask, OnsetTask, SplitTask } from '../instrument/instrument-task'
import type { SplitSegmentFrames } from '../instrument/split'
import type { SplitCopyResult, SplitCopyTask } from '../instrument/split-copy'
import type { LoopCycleTask } from '../instrument/loop-cycle'
import type { LoopFrames } from '../instrument/loops'
import type { OnsetSliceFrames } from '../instrument/onsets'
import { AppError } from './errors'

export interface HeavyWork {
  spectrogram(who: string, path: string, opts: SpectrogramOptions): Promise<Buffer>
  render(who: string, req: RenderRequest, outPath: string): Promise<RenderResult>
  measure(who: string, path: string, startSeconds: number | null, endSeconds: number | null): Promise<LevelReading>
  modulation(who: string, path: string, order: ModulationOrder): Promise<ModulationFile>
  /** The instrument tools' proposals (server/instrument/). */
  onsets(who: string, task: OnsetTask): Promise<OnsetSliceFrames[]>
  loops(who: string, task: LoopTask): Promise<LoopFrames[]>
  /** Where a sweep falls apart into takes, and the copies of those ranges. */
  split(who: string, task: SplitTask): Promise<SplitSegmentFrames[]>
  splitCopy(who: string, task: SplitCopyTask): Promise<SplitCopyResult[]>
  /** One cycle of a loop as WAV bytes, for the bench's loop audition. */
  loopCycle(who: string, task: LoopCycleTask): Promise<Buffer>
  close(): Promise<void>
}

export interface HeavyWorkOptions {
  /** Worker threads (default: one fewer than the cores, at least one, at most four). */
  threads?: number
  /** Tasks one user may have running or waiting at once. */
  perUser?: number
}

export const defaultHeavyThreads = () => Math.max(1, Math.min(4, availableParallelism() - 1))
export const HEAVY_PER_USER = 3

function entry(): URL {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js'
  return new URL(`./heavy-worker${ext}`, import.meta.url)
}

export function createHeavyWork(opts: HeavyWorkOptions = {}): HeavyWork {
  const perUser = opts.perUser ?? HEAVY_PER_USER
  let pool: RenderPool | null = null // started on first use: a server that draws nothing starts no thread
  const busy = new Map<string, number>()
  const getPool = () => (pool ??= createRenderPool(opts.threads ?? defaultHeavyThreads(), entry()))

  async function limited<T>(who: string, work: (p: RenderPool) => Promise<T>): Promise<T> {
    const n = busy.get(who) ?? 0
    if (n >= perUser) {
      throw new AppError(
        429,
        'TOO_BUSY',
        `You already have ${n} images, renders, proposals or control curves being made; wait for them to finish and try again`,
        {
          limit: perUser,
        },
      )
    }
    busy.set(who, n + 1)
    try {
      return await work(getPool())
    } finally {
      const left = (busy.get(who) ?? 1) - 1
      if (left > 0) busy.set(who, left)
      else busy.delete(who)
    }
  }

  return {
    spectrogram: (who, path, o) =>
      limited(who, async (p) => {
        const bytes = await p.run<Uint8Array>({ type: 'spectrogram', path, opts: o })
        return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength)
      }),
    render: (who, req, outPath) =>
      limited(who, (p) => {
        const { onFrames: _f, shouldStop: _s, sourceInfo: _i, ...plain } = req
        return p.run<RenderResult>({ type: 'render', req: plain satisfies PlainRenderRequest, outPath })
      }),
    measure: (who, path, startSeconds, endSeconds) =>
      limited(who, (p) => p.run<LevelReading>({ type: 'measure', path, startSeconds, endSeconds })),
    modulation: (who, path, order) => limited(who, (p) => p.run<ModulationFile>({ type: 'modulation', path, order })),
    onsets: (who, task) => limited(who, (p) => p.run<OnsetSliceFrames[]>({ type: 'onsets', ...task })),
    loops: (who, task) => limited(who, (p) => p.run<LoopFrames[]>({ type: 'loops', ...task })),
    split: (who, task) => limited(who, (p) => p.run<SplitSegmentFrames[]>({ type: 'split', ...task })),
    splitCopy: (who, task) => limited(who, (p) => p.run<SplitCopyResult[]>({ type: 'split-copy', ...task })),
    loopCycle: (who, task) =>
      limited(who, async (p) => {
        const bytes = await p.run<Uint8Array>({ type: 'loop-cycle', ...task })
        return Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength)
      }),
    async close() {
      await pool?.close()
    },
  }
}
