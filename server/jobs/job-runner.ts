import type { Db } from '../core/database'
import { nowIso } from '../core/time'
import type { JobRow } from '../../db/schema'

export type JobKind = 'analyze-take' | 'build-pack'

export interface JobHandler {
  concurrency: number
  /**
   * Does the work. Throwing marks the job failed with the error's message. `signal` aborts when the
   * runner stops; the handler passes it down to its tasks (server/work/) so they stop at once. Progress
   * is the handler's to record, in the row the API reads (the take, the build): never on the job too.
   */
  run(job: JobRow, signal: AbortSignal): Promise<void>
  /** Called once when the job ends failed (after its last attempt); `err` is what `run` threw, when it threw. */
  failed?(job: JobRow, message: string, err?: unknown): Promise<void>
}

const MAX_ATTEMPTS = 3

/** The reason a running job's signal aborts with when the runner stops. */
export class JobsStopped extends Error {
  constructor() {
    super('the server is stopping; the job resumes at the next start')
    this.name = 'JobsStopped'
  }
}

/**
 * Durable jobs kept in SQLite. The row is the queue's own bookkeeping (claimed, attempts, the
 * failure); what the API shows of the work (status, progress) lives in the take or build row. A job that was running when the server stopped
 * (crash or restart) is queued again at start; after three interrupted attempts
 * it ends failed. Work is picked in id order, per kind up to its concurrency.
 */
export class JobRunner {
  private running = new Map<number, Promise<void>>()
  private controllers = new Map<number, AbortController>()
  private active: Record<string, number> = {}
  private stopped = false
  private timer: NodeJS.Timeout | null = null

  constructor(
    private db: Db,
    private handlers: Partial<Record<JobKind, JobHandler>>,
  ) {}

  async start(): Promise<void> {
    const interrupted = await this.db.selectFrom('jobs').selectAll().where('status', '=', 'running').execute()
    for (const job of interrupted) {
      if (job.attempts >= MAX_ATTEMPTS) await this.fail(job, `Stopped ${job.attempts} times while running; giving up`)
      else await this.db.updateTable('jobs').set({ status: 'queued' }).where('id', '=', job.id).execute()
    }
    this.timer = setInterval(() => this.kick(), 1000)
    this.timer.unref()
    this.kick()
  }

  async enqueue(db: Db, kind: JobKind, refId: number): Promise<number> {
    const row = await db.insertInto('jobs').values({ kind, ref_id: refId }).returning('id').executeTakeFirstOrThrow()
    return row.id
  }

  /** Look for work now (called after enqueue, and every second). */
  kick(): void {
    if (this.stopped) return
    void this.fill().catch((err) => console.error('[jobs] could not pick work', err))
  }

  private async fill(): Promise<void> {
    for (const [kind, handler] of Object.entries(this.handlers) as [JobKind, JobHandler][]) {
      const free = handler.concurrency - (this.active[kind] ?? 0)
      if (free <= 0) continue
      const busy = [...this.running.keys()]
      let q = this.db.selectFrom('jobs').selectAll().where('kind', '=', kind).where('status', '=', 'queued')
      if (busy.length) q = q.where('id', 'not in', busy)
      const jobs = await q.orderBy('id').limit(free).execute()
      for (const job of jobs) this.launch(job, handler)
    }
  }

  private launch(job: JobRow, handler: JobHandler): void {
    this.active[job.kind] = (this.active[job.kind] ?? 0) + 1
    const controller = new AbortController()
    this.controllers.set(job.id, controller)
    const work = (async () => {
      const claimed = await this.db
        .updateTable('jobs')
        .set({ status: 'running', started_at: nowIso(), attempts: job.attempts + 1 })
        .where('id', '=', job.id)
        .where('status', '=', 'queued')
        .executeTakeFirst()
      if (Number(claimed.numUpdatedRows) !== 1) return
      const current = { ...job, attempts: job.attempts + 1 }
      try {
        await handler.run(current, controller.signal)
        await this.db
          .updateTable('jobs')
          .set({ status: 'done', finished_at: nowIso() })
          .where('id', '=', job.id)
          .execute()
      } catch (err) {
        // Stopping: leave it 'running' so the next start queues it again.
        if (this.stopped) return
        const message = err instanceof Error ? err.message : String(err)
        await this.fail(current, message, err)
      }
    })()
      .catch((err) => console.error(`[jobs] job ${job.id} could not be recorded`, err))
      .finally(() => {
        this.running.delete(job.id)
        this.controllers.delete(job.id)
        this.active[job.kind] -= 1
        this.kick()
      })
    this.running.set(job.id, work)
  }

  private async fail(job: JobRow, message: string, err?: unknown): Promise<void> {
    await this.db
      .updateTable('jobs')
      .set({ status: 'failed', error: message, finished_at: nowIso() })
      .where('id', '=', job.id)
      .execute()
    await this.handlers[job.kind as JobKind]?.failed?.(job, message, err)
  }

  /** Resolves when no job is running (tests and shutdown). */
  async idle(): Promise<void> {
    while (this.running.size) await Promise.allSettled([...this.running.values()])
  }

  /**
   * Stops picking work and aborts the running jobs' signals (their tasks stop at once); waits a little
   * for them to settle. Unfinished jobs stay 'running' and resume at the next start.
   */
  async stop(graceMs = 3000): Promise<void> {
    this.stopped = true
    if (this.timer) clearInterval(this.timer)
    for (const c of this.controllers.values()) c.abort(new JobsStopped())
    await Promise.race([this.idle(), new Promise((r) => setTimeout(r, graceMs).unref())])
  }
}
