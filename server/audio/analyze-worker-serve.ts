// The message protocol between the analysis pool and its worker threads.
// Kept apart from analyze-worker.ts (the entry that wires it to parentPort) so
// other entries, such as test fixtures, can serve the same protocol.
import type { MessagePort } from 'node:worker_threads'
import type { AnalyzeOptions, AnalyzeResult } from './analyze'
import { errorInfo, type ErrorInfo } from '../core/thread-errors'

export interface WorkerTask {
  id: number
  path: string
  peaksPath?: string
}

export type WorkerReply =
  | { id: number; type: 'progress'; fraction: number }
  | { id: number; type: 'done'; result: AnalyzeResult }
  | { id: number; type: 'error'; error: ErrorInfo }

export type Analyze = (path: string, opts: AnalyzeOptions) => Promise<AnalyzeResult>

/** Answers every task posted on the port with progress, then a result or an error. */
export function serveAnalysis(port: MessagePort, analyze: Analyze): void {
  port.on('message', (task: WorkerTask) => {
    const reply = (m: WorkerReply) => port.postMessage(m)
    analyze(task.path, {
      peaksPath: task.peaksPath,
      onProgress: (fraction) => reply({ id: task.id, type: 'progress', fraction }),
    }).then(
      (result) => reply({ id: task.id, type: 'done', result }),
      (err: unknown) => reply({ id: task.id, type: 'error', error: errorInfo(err) }),
    )
  })
}
