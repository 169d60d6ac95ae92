// Our own small queue interface. A job is three steps, so its work can run on
// another machine: `prepare` (API side: reads what the work needs from the
// database into a plain order), `perform` (anywhere: the work, with the storage
// and never the database), `record` (API side: writes the result, once).
// Two implementations: the in-process runner over the jobs table
// (job-runner.ts, the default) and BullMQ over Redis when REDIS_URL is set
// (bullmq-queue.ts, with workers started by `npm run worker`).
import type { Db } from '../core/database'
import type { Storage } from '../core/storage'
import type { JobRow } from '../../db/schema'
import type { JobHandler, JobKind } from './job-runner'

export interface WorkEnv {
  storage: Storage
  /** Aborts when the job must stop (the process stopping); pass it to every task. */
  signal: AbortSignal
  /** 0..1; the API side writes it into the row the API reads. */
  progress(fraction: number): void
}

export interface JobWork<Order = unknown, Result = unknown> {
  /** Jobs of this kind running at once (per process, or per worker process). */
  concurrency: number
  /** API side: the order, read from the database; null when there is nothing left to do (deleted meanwhile). */
  prepare(job: JobRow): Promise<Order | null>
  /** Anywhere: plain data in (the order), plain data out (JSON-safe: it may cross Redis). */
  perform(order: Order, env: WorkEnv): Promise<Result>
  /** API side: records what `perform` answered. */
  record(job: JobRow, order: Order, result: Result): Promise<void>
  /** API side: progress into the row the API reads (the take, the build). */
  progress(job: JobRow, order: Order, fraction: number): void
  /** API side, once, when the job ends failed (after its last attempt). */
  failed?(job: JobRow, message: string, err?: unknown): Promise<void>
}

export type JobWorks = Record<JobKind, JobWork<never, never>>

/** What the rest of the server sees of the jobs, whichever implementation runs them. */
export interface JobQueue {
  /** Adds a job inside the caller's transaction (the jobs table is the outbox either way). */
  enqueue(db: Db, kind: JobKind, refId: number): Promise<number>
  /** Look for work now (after the caller's transaction committed). */
  kick(): void
  start(): Promise<void>
  stop(graceMs?: number): Promise<void>
  /** Resolves when no job is running here (tests and shutdown). */
  idle(): Promise<void>
}

/** The three steps run in this process, as the in-process runner's handler. */
export function localHandler<O, R>(work: JobWork<O, R>, storage: Storage): JobHandler {
  return {
    concurrency: work.concurrency,
    async run(job, signal) {
      const order = await work.prepare(job)
      if (order === null) return
      const result = await work.perform(order, { storage, signal, progress: (p) => work.progress(job, order, p) })
      await work.record(job, order, result)
    },
    failed: work.failed?.bind(work),
  }
}
