import type { Db } from '../core/database'
import { nowIso } from '../core/time'
import type { JobRow } from '../../db/schema'

export type JobKind = 'analyze-take' | 'build-pack'

export interface JobHandler {
  concurrency: number
  /** Does the work; `progress` takes 0..1. Throwing marks the job failed with the error's message. */
  run(job: JobRow, progress: (fraction: number) => Promise<void>): Promise<void>
  /** Called once when the job ends failed (after its last attempt); `err` is what `run` threw, when it threw. */
  failed?(job: JobRow, message: string, err?: unknown): Promise<void>
}

const MAX_ATTEMPTS = 3

/**
 * Durable jobs kept in SQLite. A job that was running when the server stopped
 * (crash or restart) is queued again at start; after three interrupted attempts
 * it ends failed. Work is picked in id order, per kind up to its concurrency.
 */
export class JobRunner {
  private running = new Map<number, Promise<void>>()
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
    const work = (async () => {
      const claimed = await this.db
        .updateTable('jobs')
        .set({ status: 'running', started_at: nowIso(), attempts: job.attempts + 1, progress: 0 })
        .where('id', '=', job.id)
        .where('status', '=', 'queued')
        .executeTakeFirst()
      if (Number(claimed.numUpdatedRows) !== 1) return
      const current = { ...job, attempts: job.attempts + 1 }
      try {
        await handler.run(current, (p) =>
          this.db
            .updateTable('jobs')
            .set({ progress: p })
            .where('id', '=', job.id)
            .execute()
            .then(() => undefined),
        )
        await this.db
          .updateTable('jobs')
          .set({ status: 'done', progress: 1, finished_at: nowIso() })
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

  /** Stops picking work and waits a little for running jobs; unfinished ones resume at the next start. */
  async stop(graceMs = 3000): Promise<void> {
    this.stopped = true
    if (this.timer) clearInterval(this.timer)
    await Promise.race([this.idle(), new Promise((r) => setTimeout(r, graceMs).unref())])
  }

  get isStopped(): boolean {
    return this.stopped
  }
}
