// The one execution layer for CPU-heavy audio work: analysis, renders, pack
// builds, previews, quick exports, range measurements, spectrograms, peaks and
// the instrument and modulation tasks all run here, on ONE pool of worker
// threads per process (piscina), never on the API's event loop.
//
//   runAudioTask(kind, input, { signal, onProgress })
//
// Cancellation is the AbortSignal: a queued task leaves the queue, a running
// one has its thread stopped (piscina replaces it) and the promise rejects with
// the signal's reason. Progress comes back over a MessagePort of the task's
// own. A task may ask for subtasks (a build's item renders): they run on the
// same pool under the same signal, so stopping the build stops its renders.
//
// Worker threads run at a lower scheduling priority than the API thread (nice
// +10, per thread on Linux), so a request never waits behind audio work for a
// core. The entry is bundled to plain JavaScript (server/core/workers.ts).
import { MessageChannel } from 'node:worker_threads'
import { availableParallelism } from 'node:os'
import Piscina from 'piscina'
import { errorInfo, reviveError } from '../core/thread-errors'
import { workerModule } from '../core/workers'
import { WavFormatError } from '../audio/wav-errors'
import type { FromTask, TaskAnswer, TaskEnvelope, ToTask } from './protocol'
import type { AudioTaskInput, AudioTaskKind, AudioTaskOutput } from './task-kinds'

export type { AudioTaskInput, AudioTaskKind, AudioTaskOutput } from './task-kinds'

export interface AudioTaskOptions {
  signal?: AbortSignal
  /** What the numbers mean depends on the kind (task-kinds.ts). */
  onProgress?: (value: number) => void
  /**
   * A task that reports no progress for this long (a reader stuck on hostile metadata) is stopped
   * and fails. Only for kinds that report progress regularly (analyze).
   */
  silenceLimitMs?: number
}

/** A task stopped because nothing was heard from it for its silence limit. */
export class TaskSilent extends Error {
  constructor(seconds: number) {
    super(`measuring stopped answering: it sent nothing for ${seconds} s and was stopped`)
    this.name = 'TaskSilent'
  }
}

/** A task stopped through its signal, when the signal gave no reason of its own. */
export class TaskAborted extends Error {
  constructor() {
    super('the task was stopped')
    this.name = 'TaskAborted'
  }
}

/**
 * Threads: at least two (a pack build's zip writer holds one while its renders need another), at
 * most four, otherwise one more than the cores: the zip writer waits on disk part of the time.
 */
export const defaultAudioThreads = () => Math.max(2, Math.min(4, availableParallelism() + 1))

let pool: Piscina | null = null
let holders = 0
let wantedThreads = 0

function entry(): URL {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js'
  return new URL(`./audio-worker${ext}`, import.meta.url)
}

function thePool(): Piscina {
  if (pool) return pool
  pool = new Piscina({
    filename: workerModule(entry()).href,
    maxThreads: Math.max(2, wantedThreads || defaultAudioThreads()),
    minThreads: 0,
    idleTimeout: 60_000,
    // Without the parent's Node options: under tsx they would load its loader into every thread.
    execArgv: [],
    niceIncrement: 10,
  })
  return pool
}

/**
 * Takes a share in the process's pool and bundles its worker now (bundling blocks this thread a
 * few hundred milliseconds, which must not fall on a request). `threads` sizes the pool when it
 * is started by this call (the first holder decides). Release with the returned function: the
 * pool closes when its last holder lets go.
 */
export function holdAudioTasks(threads = 0): () => Promise<void> {
  if (!pool) wantedThreads = threads
  thePool()
  holders++
  let released = false
  return async () => {
    if (released) return
    released = true
    if (--holders > 0 || !pool) return
    const p = pool
    pool = null
    await p.destroy()
  }
}

/** Threads the pool runs at most. */
export function audioThreads(): number {
  return thePool().maxThreads
}

const revive = (a: TaskAnswer & { ok: false }) =>
  reviveError(a.error, { WavFormatError: (x) => new WavFormatError(x.reason ?? x.message) })

export async function runAudioTask<K extends AudioTaskKind>(
  kind: K,
  input: AudioTaskInput<K>,
  opts: AudioTaskOptions = {},
): Promise<AudioTaskOutput<K>> {
  const { signal, onProgress, silenceLimitMs } = opts
  signal?.throwIfAborted()
  const piscina = thePool()
  // One controller for the task and its subtasks: the caller's signal or the silence limit stops both.
  const stop = new AbortController()
  const onAbort = () => stop.abort(signal?.reason ?? new TaskAborted())
  signal?.addEventListener('abort', onAbort, { once: true })
  let silence: NodeJS.Timeout | undefined
  const listen = () => {
    if (!silenceLimitMs) return
    clearTimeout(silence)
    silence = setTimeout(() => stop.abort(new TaskSilent(Math.round(silenceLimitMs / 1000))), silenceLimitMs)
  }
  const { port1, port2 } = new MessageChannel()
  const reply = (m: ToTask) => port1.postMessage(m)
  port1.on('message', (m: FromTask) => {
    if (m.type === 'progress') {
      listen()
      onProgress?.(m.value)
      return
    }
    runAudioTask(m.kind, m.input as never, {
      signal: stop.signal,
      onProgress: (value) => reply({ type: 'subprogress', id: m.id, value }),
    }).then(
      (value) => reply({ type: 'subanswer', id: m.id, answer: { ok: true, value } }),
      (err: unknown) => reply({ type: 'subanswer', id: m.id, answer: { ok: false, error: errorInfo(err) } }),
    )
  })
  listen()
  try {
    const envelope: TaskEnvelope = { kind, input, port: port2 }
    const answer = (await piscina.run(envelope, { transferList: [port2], signal: stop.signal })) as TaskAnswer
    if (!answer.ok) throw revive(answer)
    return answer.value as AudioTaskOutput<K>
  } catch (err) {
    if (stop.signal.aborted) throw stop.signal.reason instanceof Error ? stop.signal.reason : new TaskAborted()
    throw err
  } finally {
    clearTimeout(silence)
    signal?.removeEventListener('abort', onAbort)
    port1.close()
  }
}
