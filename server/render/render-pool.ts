// Renders in worker threads, so a build uses more than one core and never
// holds the API's event loop. One render per worker at a time; a pool lives for
// one build and is closed at its end. Workers start as plain JavaScript
// (server/core/workers.ts): 10–20 MB each.
import { availableParallelism } from 'node:os'
import type { Worker } from 'node:worker_threads'
import { reviveError, type ErrorInfo } from '../core/thread-errors'
import { startWorker } from '../core/workers'
import { WavFormatError } from '../audio/wav-errors'
import { RenderStopped, type PlainRenderRequest, type RenderRequest, type RenderResult } from './render'

export interface RenderTask {
  type: 'render'
  id: number
  req: PlainRenderRequest
  outPath: string
}

/**
 * Any other task a worker entry serves (the API's heavy-work entry serves spectrograms and range
 * measurements beside renders): a `type` and plain, cloneable fields; it answers `done` or `error`.
 */
export interface OtherTask {
  type: string
  id: number
  [field: string]: unknown
}

export type RenderReply =
  | { type: 'frames'; id: number; frames: number }
  | { type: 'done'; id: number; result: RenderResult }
  | { type: 'error'; id: number; error: ErrorInfo }

export interface RenderPool {
  readonly size: number
  render(req: RenderRequest, outPath: string, signal: { stopped: boolean }): Promise<RenderResult>
  /** Runs another kind of task on the next free worker (its entry must serve that `type`). */
  run<T>(task: Omit<OtherTask, 'id'>): Promise<T>
  close(): Promise<void>
}

/** One per core, at most two (the zip, written by the build process's own thread, needs a share of the CPU too). */
export const defaultRenderWorkers = () => Math.max(1, Math.min(2, availableParallelism()))

/** The render worker's entry beside this file (.ts under tsx, .js when built). */
export function renderWorkerEntry(): URL {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js'
  return new URL(`./render-worker${ext}`, import.meta.url)
}

const revive = (e: ErrorInfo): Error =>
  e.name === 'Error' && e.message === 'render stopped'
    ? new RenderStopped()
    : reviveError(e, { WavFormatError: (x) => new WavFormatError(x.reason ?? x.message) })

interface Slot {
  worker: Worker
  busy: boolean
}

/**
 * `entry`: the worker's module; give it when this code itself runs bundled (in the build
 * process), where the entry cannot be found beside this file.
 */
export function createRenderPool(size = defaultRenderWorkers(), entry: URL = renderWorkerEntry()): RenderPool {
  const slots: Slot[] = []
  const waiting: ((s: Slot) => void)[] = []
  const tasks = new Map<
    number,
    { resolve: (r: never) => void; reject: (e: Error) => void; onFrames?: (n: number) => void; slot: Slot }
  >()
  let nextId = 1
  let closed = false

  const release = (slot: Slot) => {
    slot.busy = false
    const w = waiting.shift()
    if (w) {
      slot.busy = true
      w(slot)
    }
  }

  const start = (): Slot => {
    const slot: Slot = { worker: startWorker(entry), busy: false }
    slot.worker.on('message', (m: RenderReply) => {
      const t = tasks.get(m.id)
      if (!t) return
      if (m.type === 'frames') return t.onFrames?.(m.frames)
      tasks.delete(m.id)
      release(slot)
      if (m.type === 'done') t.resolve(m.result as never)
      else t.reject(revive(m.error))
    })
    slot.worker.on('exit', (code) => {
      slots.splice(slots.indexOf(slot), 1)
      for (const [id, t] of tasks) {
        if (t.slot !== slot) continue
        tasks.delete(id)
        t.reject(new Error(closed ? 'render pool closed' : `render worker stopped (exit code ${code})`))
      }
    })
    slots.push(slot)
    return slot
  }

  const acquire = (): Promise<Slot> => {
    const free = slots.find((s) => !s.busy) ?? (slots.length < size ? start() : null)
    if (free) {
      free.busy = true
      return Promise.resolve(free)
    }
    return new Promise((resolve) => waiting.push(resolve))
  }

  return {
    size,
    async render(req, outPath, signal) {
      if (closed) throw new Error('render pool closed')
      const slot = await acquire()
      const id = nextId++
      const { onFrames, shouldStop: _s, sourceInfo: _i, ...plain } = req
      const watch = setInterval(() => {
        if (signal.stopped) slot.worker.postMessage({ type: 'stop', id })
      }, 50)
      try {
        return await new Promise<RenderResult>((resolve, reject) => {
          tasks.set(id, { resolve, reject, onFrames, slot })
          const task: RenderTask = { type: 'render', id, req: plain, outPath }
          slot.worker.postMessage(task)
        })
      } finally {
        clearInterval(watch)
      }
    },
    async run<T>(fields: Omit<OtherTask, 'id'>) {
      if (closed) throw new Error('render pool closed')
      const slot = await acquire()
      const id = nextId++
      return new Promise<T>((resolve, reject) => {
        tasks.set(id, { resolve: resolve as (r: never) => void, reject, slot })
        slot.worker.postMessage({ ...fields, id })
      })
    },
    async close() {
      closed = true
      await Promise.all(slots.map((s) => s.worker.terminate()))
    },
  }
}
