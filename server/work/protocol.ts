// The messages a running task and the pool's caller exchange over the task's
// own MessagePort (piscina carries only the input and the answer): progress up,
// and subtasks a task asks the caller to run on the same pool (a pack build's
// item renders), with their progress and answers down.
import type { ErrorInfo } from '../core/thread-errors'
import type { AudioTaskKind } from './task-kinds'

/** What a task hands back to piscina: errors travel as plain fields so their class and code survive. */
export type TaskAnswer = { ok: true; value: unknown } | { ok: false; error: ErrorInfo }

export type FromTask =
  { type: 'progress'; value: number } | { type: 'subtask'; id: number; kind: AudioTaskKind; input: unknown }

export type ToTask =
  { type: 'subprogress'; id: number; value: number } | { type: 'subanswer'; id: number; answer: TaskAnswer }

/** The task as piscina passes it to the worker. */
export interface TaskEnvelope {
  kind: AudioTaskKind
  input: unknown
  port: import('node:worker_threads').MessagePort
}
