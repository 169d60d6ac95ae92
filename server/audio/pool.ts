// A pool of worker threads running analyzeFile, so long analyses never block
// the API's event loop. One task per worker at a time; tasks queue in order.
// A worker that crashes or exits is replaced and its task rejected, so a
// caller never waits on a promise that cannot settle.
import { availableParallelism } from 'node:os'
import type { Worker } from 'node:worker_threads'
import { reviveError, type ErrorInfo } from '../core/thread-errors'
import { startWorker, workerModule } from '../core/workers'
import type { AnalyzeResult } from './analyze'
import type { WorkerReply, WorkerTask } from './analyze-worker-serve'
import { WavFormatError } from './wav-reader'

export interface AnalysisPool {
  readonly size: number
  run(path: string, peaksPath?: string, onProgress?: (fraction: number) => void): Promise<AnalyzeResult>
  /** Rejects queued and running tasks and stops the workers. */
  close(): Promise<void>
}

export interface PoolOptions {
  /** Worker entry; defaults to analyze-worker beside this file (.ts under tsx, .js when built). */
  workerUrl?: URL
  /**
   * Time limit on a worker's silence: a task that sends neither progress nor an answer for this
   * long (a reader stuck on hostile metadata, say) has its worker stopped and fails. Default 2 minutes.
   */
  silenceLimitMs?: number
}

interface Task extends WorkerTask {
  onProgress?: (fraction: number) => void
  resolve: (r: AnalyzeResult) => void
  reject: (e: Error) => void
}

interface Slot {
  worker: Worker
  task: Task | null
  watchdog?: NodeJS.Timeout
  /** Why the pool stopped this worker, when it did. */
  stoppedFor?: string
}

export function defaultPoolSize(): number {
  return Math.max(1, availableParallelism() - 1)
}

function defaultWorkerUrl(): URL {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js'
  return new URL(`./analyze-worker${ext}`, import.meta.url)
}

const revive = (e: ErrorInfo): Error =>
  reviveError(e, { WavFormatError: (x) => new WavFormatError(x.reason ?? x.message) })

export function createAnalysisPool(size = defaultPoolSize(), opts: PoolOptions = {}): AnalysisPool {
  const url = opts.workerUrl ?? defaultWorkerUrl()
  const silenceLimit = opts.silenceLimitMs ?? 120_000
  // Bundle the worker now, at start-up: bundling blocks the thread it runs on for a few hundred
  // milliseconds, which must not fall on the API while it answers requests (the first upload).
  workerModule(url)
  const slots: Slot[] = []
  const queue: Task[] = []
  let nextId = 1
  let closed = false

  /** (Re)starts the silence limit of a busy worker. */
  function watch(slot: Slot): void {
    clearTimeout(slot.watchdog)
    slot.watchdog = setTimeout(() => {
      slot.stoppedFor = `it sent nothing for ${Math.round(silenceLimit / 1000)} s and was stopped`
      void slot.worker.terminate()
    }, silenceLimit)
    slot.watchdog.unref()
  }

  function settle(slot: Slot): void {
    clearTimeout(slot.watchdog)
    slot.task = null
    slot.worker.unref() // an idle worker must not keep the process alive
    dispatch()
  }

  function start(): Slot {
    const slot: Slot = { worker: startWorker(url), task: null }
    slot.worker.on('message', (m: WorkerReply) => {
      const task = slot.task
      if (!task || m.id !== task.id) return
      if (m.type === 'progress') {
        watch(slot)
        task.onProgress?.(m.fraction)
      } else if (m.type === 'done') {
        settle(slot)
        task.resolve(m.result)
      } else {
        settle(slot)
        task.reject(revive(m.error))
      }
    })
    let failure: Error | null = null
    slot.worker.on('error', (err) => {
      failure = err
    })
    slot.worker.on('exit', (code) => {
      clearTimeout(slot.watchdog)
      slots.splice(slots.indexOf(slot), 1)
      const task = slot.task
      slot.task = null
      if (task) {
        const why = failure ? failure.message : `exit code ${code}`
        const message = slot.stoppedFor
          ? `measuring stopped answering: ${slot.stoppedFor}`
          : `analysis worker crashed: ${why}`
        task.reject(new Error(closed ? 'analysis pool closed' : message))
      }
      if (!closed) dispatch()
    })
    slots.push(slot)
    return slot
  }

  function dispatch(): void {
    while (queue.length > 0) {
      const slot = slots.find((s) => s.task === null) ?? (slots.length < size ? start() : null)
      if (!slot) return
      const task = queue.shift()!
      slot.task = task
      slot.worker.ref()
      const message: WorkerTask = { id: task.id, path: task.path, peaksPath: task.peaksPath }
      slot.worker.postMessage(message)
      watch(slot)
    }
  }

  return {
    size,
    run(path, peaksPath, onProgress) {
      if (closed) return Promise.reject(new Error('analysis pool closed'))
      return new Promise<AnalyzeResult>((resolve, reject) => {
        queue.push({ id: nextId++, path, peaksPath, onProgress, resolve, reject })
        dispatch()
      })
    },
    async close() {
      closed = true
      for (const task of queue.splice(0)) task.reject(new Error('analysis pool closed'))
      await Promise.all(slots.map((s) => s.worker.terminate()))
    },
  }
}
