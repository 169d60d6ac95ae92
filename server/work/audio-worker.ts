// Worker-thread entry of the one audio-task pool (audio-tasks.ts): piscina
// calls the default export once per task, and it dispatches by kind. Bundled to
// plain JavaScript before piscina loads it (server/core/workers.ts).
import { errorInfo, reviveError } from '../core/thread-errors'
import { analyzeFile } from '../audio/analyze'
import { renderSpectrogram } from '../audio/spectrogram'
import { probeWav } from '../audio/wav-reader'
import { WavFormatError } from '../audio/wav-errors'
import { measureRange } from '../render/level-meter'
import { rangeFrames } from '../audio/range-frames'
import { renderItem } from '../render/render'
import { computeModulation } from '../modulation/modulation-compute'
import { runLoopTask, runOnsetTask, runSplitTask } from '../instrument/instrument-task'
import { runSplitCopyTask } from '../instrument/split-copy'
import { runLoopCycleTask } from '../instrument/loop-cycle'
import { buildTask } from '../packs/builds/build-writer'
import type { FromTask, TaskAnswer, TaskEnvelope, ToTask } from './protocol'
import type { AudioTaskInput, AudioTaskKind, AudioTaskOutput } from './task-kinds'

interface TaskContext {
  progress(value: number): void
  /** Runs another task on the pool through the caller (never nested in this thread). */
  subtask<K extends AudioTaskKind>(
    kind: K,
    input: AudioTaskInput<K>,
    onProgress?: (value: number) => void,
  ): Promise<AudioTaskOutput<K>>
}

type Handlers = { [K in AudioTaskKind]: (input: AudioTaskInput<K>, t: TaskContext) => Promise<AudioTaskOutput<K>> }

const handlers: Handlers = {
  analyze: (i, t) => analyzeFile(i.path, { peaksPath: i.peaksPath, onProgress: (f) => t.progress(f) }),
  render: (i, t) => {
    let sent = 0
    // Previews and a build's item renders are files that can be made again: no fsync (a build fsyncs its zip).
    const onFrames = (frames: number) => {
      if (frames - sent < 1 << 18) return // about every 5 s of 48 kHz audio
      sent = frames
      t.progress(frames)
    }
    return renderItem({ ...i.req, onFrames }, i.outPath, { durable: false })
  },
  spectrogram: async (i) => {
    const png = await renderSpectrogram(i.path, i.opts)
    return new Uint8Array(png.buffer, png.byteOffset, png.byteLength)
  },
  measure: async (i) => {
    const info = await probeWav(i.path)
    const rate = info.format.sampleRate
    const start = Math.round((i.startSeconds ?? 0) * rate)
    const end =
      i.endSeconds === null ? info.format.frames : Math.min(info.format.frames, Math.round(i.endSeconds * rate))
    return measureRange(i.path, info, start, end)
  },
  'range-frames': (i) => rangeFrames(i.path, i.startSeconds, i.endSeconds),
  modulation: (i) => computeModulation(i.path, i.order),
  onsets: (i) => runOnsetTask(i),
  loops: (i) => runLoopTask(i),
  split: (i) => runSplitTask(i),
  'split-copy': (i) => runSplitCopyTask(i),
  'loop-cycle': (i) => runLoopCycleTask(i),
  'pack-build': (order, t) =>
    buildTask(order, {
      render: (req, outPath, onFrames) => t.subtask('render', { req, outPath }, onFrames),
      onProgress: (fraction) => t.progress(fraction),
    }),
}

const revive = (e: TaskAnswer & { ok: false }) =>
  reviveError(e.error, { WavFormatError: (x) => new WavFormatError(x.reason ?? x.message) })

export default async function runTask({ kind, input, port }: TaskEnvelope): Promise<TaskAnswer> {
  const send = (m: FromTask) => port.postMessage(m)
  const waiting = new Map<number, { resolve(v: unknown): void; reject(e: Error): void; onProgress?(v: number): void }>()
  let nextId = 1
  port.on('message', (m: ToTask) => {
    const w = waiting.get(m.id)
    if (!w) return
    if (m.type === 'subprogress') return w.onProgress?.(m.value)
    waiting.delete(m.id)
    if (m.answer.ok) w.resolve(m.answer.value)
    else w.reject(revive(m.answer))
  })
  const t: TaskContext = {
    progress: (value) => send({ type: 'progress', value }),
    subtask: (sub, subInput, onProgress) =>
      new Promise((resolve, reject) => {
        const id = nextId++
        waiting.set(id, { resolve: resolve as (v: unknown) => void, reject, onProgress })
        send({ type: 'subtask', id, kind: sub, input: subInput })
      }),
  }
  try {
    const run = handlers[kind] as (i: unknown, t: TaskContext) => Promise<unknown>
    return { ok: true, value: await run(input, t) }
  } catch (err) {
    return { ok: false, error: errorInfo(err) }
  } finally {
    port.close()
  }
}
