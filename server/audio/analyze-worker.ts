// Worker thread side of the analysis pool: runs analyzeFile for each task the
// pool posts and reports progress, the result or a serialisable error.
import { parentPort } from 'node:worker_threads'
import { analyzeFile } from './analyze'
import { WavFormatError } from './wav-reader'

export interface WorkerTask {
  id: number
  path: string
  peaksPath?: string
}

export interface WorkerError {
  name: string
  message: string
  /** WavFormatError's reason. */
  reason?: string
  /** Node system error code such as ENOENT. */
  code?: string
}

export type WorkerReply =
  | { id: number; type: 'progress'; fraction: number }
  | { id: number; type: 'done'; result: Awaited<ReturnType<typeof analyzeFile>> }
  | { id: number; type: 'error'; error: WorkerError }

function serialise(err: unknown): WorkerError {
  if (err instanceof WavFormatError) return { name: 'WavFormatError', message: err.message, reason: err.reason }
  if (err instanceof Error) {
    const code = (err as NodeJS.ErrnoException).code
    return { name: err.name, message: err.message, ...(typeof code === 'string' ? { code } : {}) }
  }
  return { name: 'Error', message: String(err) }
}

const port = parentPort
if (!port) throw new Error('analyze-worker must run in a worker thread')

port.on('message', (task: WorkerTask) => {
  const reply = (m: WorkerReply) => port.postMessage(m)
  analyzeFile(task.path, {
    peaksPath: task.peaksPath,
    onProgress: (fraction) => reply({ id: task.id, type: 'progress', fraction }),
  }).then(
    (result) => reply({ id: task.id, type: 'done', result }),
    (err: unknown) => reply({ id: task.id, type: 'error', error: serialise(err) }),
  )
})
