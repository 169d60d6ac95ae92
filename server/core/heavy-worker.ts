// Worker-thread entry of the API's heavy-work pool (heavy-work.ts): the render
// pool's protocol (render-pool.ts), serving three kinds of task, one at a time:
//   render       one pack item, for a preview or a quick export
//   spectrogram  a take's or an excerpt's spectrogram, as PNG bytes
//   measure      loudness and true peak of a range of a take (an item added to a pack)
//   modulation   a take's control curve as a csv, wav or MIDI file (server/modulation/)
//   onsets, loops, split  the instrument tools' proposals over a take (server/instrument/)
//   split-copy  sample-exact copies of ranges of a take, each a file of its own
//   loop-cycle  one cycle of a loop (crossfaded) as a small WAV for the bench to play round
import { parentPort } from 'node:worker_threads'
import { errorInfo } from './thread-errors'
import { renderItem, type PlainRenderRequest } from '../render/render'
import { measureRange } from '../render/level-meter'
import { renderSpectrogram, type SpectrogramOptions } from '../audio/spectrogram'
import { probeWav } from '../audio/wav-reader'
import { computeModulation } from '../modulation/modulation-compute'
import type { ModulationOrder } from '../modulation/modulation-files'
import {
  runLoopTask,
  runOnsetTask,
  runSplitTask,
  type LoopTask,
  type OnsetTask,
  type SplitTask,
} from '../instrument/instrument-task'
import { runSplitCopyTask, type SplitCopyTask } from '../instrument/split-copy'
import { runLoopCycleTask, type LoopCycleTask } from '../instrument/loop-cycle'

const port = parentPort
if (!port) throw new Error('heavy-worker must run in a worker thread')

export type HeavyTask =
  | { type: 'render'; id: number; req: PlainRenderRequest; outPath: string }
  | { type: 'spectrogram'; id: number; path: string; opts: SpectrogramOptions }
  | { type: 'measure'; id: number; path: string; startSeconds: number | null; endSeconds: number | null }
  | { type: 'modulation'; id: number; path: string; order: ModulationOrder }
  | ({ type: 'onsets'; id: number } & OnsetTask)
  | ({ type: 'loops'; id: number } & LoopTask)
  | ({ type: 'split'; id: number } & SplitTask)
  | ({ type: 'split-copy'; id: number } & SplitCopyTask)
  | ({ type: 'loop-cycle'; id: number } & LoopCycleTask)

async function serve(m: HeavyTask): Promise<unknown> {
  switch (m.type) {
    case 'render':
      // A preview is a cache entry that can be made again: no fsync.
      return renderItem(m.req, m.outPath, { durable: false })
    case 'spectrogram': {
      const png = await renderSpectrogram(m.path, m.opts)
      return new Uint8Array(png.buffer, png.byteOffset, png.byteLength)
    }
    case 'measure': {
      const info = await probeWav(m.path)
      const rate = info.format.sampleRate
      const start = Math.round((m.startSeconds ?? 0) * rate)
      const end =
        m.endSeconds === null ? info.format.frames : Math.min(info.format.frames, Math.round(m.endSeconds * rate))
      return measureRange(m.path, info, start, end)
    }
    case 'modulation':
      return computeModulation(m.path, m.order)
    case 'onsets':
      return runOnsetTask(m)
    case 'loops':
      return runLoopTask(m)
    case 'split':
      return runSplitTask(m)
    case 'split-copy':
      return runSplitCopyTask(m)
    case 'loop-cycle':
      return runLoopCycleTask(m)
  }
}

port.on('message', (m: HeavyTask) => {
  serve(m).then(
    (result) => port.postMessage({ type: 'done', id: m.id, result }),
    (err: unknown) => port.postMessage({ type: 'error', id: m.id, error: errorInfo(err) }),
  )
})
