// The message protocol between the analysis pool and its worker threads.
// Kept apart from analyze-worker.ts (the entry that wires it to parentPort) so
// other entries, such as test fixtures, can serve the same protocol.
import type { MessagePort } from 'node:worker_threads'
import type { AnalyzeOptions, AnalyzeResult } from './analyze'
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
  | { id: number; type: 'done'; result: AnalyzeResult }
  | { id: number; type: 'error'; error: WorkerError }

export type Analyze = (path: string, opts: AnalyzeOptions) => Promise<AnalyzeResult>

function serialise(err: unknown): WorkerError {
  if (err instanceof WavFormatError) return { name: 'WavFormatError', message: err.message, reason: err.reason }
  if (err instanceof Error) {
    const code = (err as NodeJS.ErrnoException).code
    return { name: err.name, message: err.message, ...(typeof code === 'string' ? { code } : {}) }
  }
  return { name: 'Error', message: String(err) }
}

/** Answers every task posted on the port with progress, then a result or an error. */
export function serveAnalysis(port: MessagePort, analyze: Analyze): void {
  port.on('message', (task: WorkerTask) => {
    const reply = (m: WorkerReply) => port.postMessage(m)
    analyze(task.path, {
      peaksPath: task.peaksPath,
      onProgress: (fraction) => reply({ id: task.id, type: 'progress', fraction }),
    }).then(
      (result) => reply({ id: task.id, type: 'done', result }),
      (err: unknown) => reply({ id: task.id, type: 'error', error: serialise(err) }),
    )
  })
}
