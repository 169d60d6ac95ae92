// Jobs through BullMQ (Redis), when REDIS_URL is set: the work runs in worker
// processes (`npm run worker`, server/cli/worker.ts), on this machine or others,
// which need Redis and the storage but never the database.
//
// The jobs table stays the outbox and the record: `enqueue` writes a row inside
// the caller's transaction, so a job exists exactly when its take or build does.
// This process then claims each queued row, `prepare`s its order and adds it to
// Redis under the row's id as BullMQ's job id (adding it twice is a no-op, so a
// crash between claim and add is made good by adding again). The id is prefixed
// with a random name kept in this database, so two databases sharing a Redis
// (or a database made afresh) never take each other's answers for their own. Workers answer
// through Redis; this process `record`s each answer once (the row moves from
// 'running' to 'done' only here, one at a time). A worker killed mid-job stops
// renewing its lock; after the lock runs out another worker's stalled check
// puts the job back and another worker runs it from scratch.
import { Job, Queue, QueueEvents } from 'bullmq'
import { Redis } from 'ioredis'
import type { Db } from '../core/database'
import { randomBytes } from 'node:crypto'
import { getSetting, setSetting } from '../core/settings'
import { nowIso } from '../core/time'
import type { JobRow } from '../../db/schema'
import type { JobKind } from './job-runner'
import type { JobQueue, JobWork, JobWorks } from './queue'

export const queueName = (kind: JobKind) => `strayfield-${kind}`

/** What a job carries through Redis: all the worker needs. */
export interface QueuedJob {
  jobId: number
  refId: number
  order: unknown
}

/** ioredis as BullMQ wants it (blocking commands wait for as long as they need). */
export const redisConnection = (url: string) => new Redis(url, { maxRetriesPerRequest: null })

export class BullJobs implements JobQueue {
  private queues = new Map<JobKind, Queue>()
  private events: QueueEvents[] = []
  private orders = new Map<number, { row: JobRow; order: unknown }>()
  private busy = new Set<number>()
  private work = new Set<Promise<void>>()
  private timer: NodeJS.Timeout | null = null
  private stopped = false
  private namespace = ''

  constructor(
    private db: Db,
    private works: JobWorks,
    private redisUrl: string,
  ) {}

  async enqueue(db: Db, kind: JobKind, refId: number): Promise<number> {
    const row = await db.insertInto('jobs').values({ kind, ref_id: refId }).returning('id').executeTakeFirstOrThrow()
    return row.id
  }

  private bullId = (id: number) => `${this.namespace}-${id}`

  /** The row id of one of our BullMQ job ids; null for another database's job. */
  private rowId(bullId: string): number | null {
    const cut = bullId.lastIndexOf('-')
    return bullId.slice(0, cut) === this.namespace ? Number(bullId.slice(cut + 1)) : null
  }

  async start(): Promise<void> {
    this.namespace = (await getSetting(this.db, 'job_namespace')) ?? randomBytes(6).toString('hex')
    await setSetting(this.db, 'job_namespace', this.namespace)
    for (const kind of Object.keys(this.works) as JobKind[]) {
      this.queues.set(kind, new Queue(queueName(kind), { connection: redisConnection(this.redisUrl) }))
      const events = new QueueEvents(queueName(kind), { connection: redisConnection(this.redisUrl) })
      const settleLater = ({ jobId }: { jobId: string }) => {
        const id = this.rowId(jobId)
        if (id !== null) this.track(this.settle(kind, id))
      }
      events.on('completed', settleLater)
      events.on('failed', settleLater)
      events.on('progress', ({ jobId, data }) => {
        const id = this.rowId(jobId)
        const kept = id === null ? undefined : this.orders.get(id)
        if (kept && typeof data === 'number') this.works[kind].progress(kept.row, kept.order as never, data)
      })
      await events.waitUntilReady()
      this.events.push(events)
    }
    this.timer = setInterval(() => this.kick(), 1000)
    this.timer.unref()
    this.kick()
  }

  /** Dispatches queued rows and settles answered ones (after an enqueue, and every second). */
  kick(): void {
    if (this.stopped || this.queues.size === 0) return
    this.track(this.tick().catch((err) => console.error('[jobs] could not reach the queue', err)))
  }

  private track(p: Promise<void>): void {
    this.work.add(p)
    void p.finally(() => this.work.delete(p))
  }

  private async tick(): Promise<void> {
    const rows = await this.db
      .selectFrom('jobs')
      .selectAll()
      .where('status', 'in', ['queued', 'running'])
      .orderBy('id')
      .execute()
    for (const row of rows) {
      const kind = row.kind as JobKind
      if (!this.works[kind] || this.busy.has(row.id)) continue
      if (row.status === 'queued') await this.dispatch(row, this.works[kind])
      else await this.settle(kind, row.id)
    }
  }

  private async dispatch(row: JobRow, work: JobWork<never, never>): Promise<void> {
    this.busy.add(row.id)
    try {
      const claimed = await this.db
        .updateTable('jobs')
        .set({ status: 'running', started_at: nowIso(), attempts: row.attempts + 1 })
        .where('id', '=', row.id)
        .where('status', '=', 'queued')
        .executeTakeFirst()
      if (Number(claimed.numUpdatedRows) !== 1) return
      await this.add({ ...row, status: 'running', attempts: row.attempts + 1 }, work)
    } finally {
      this.busy.delete(row.id)
    }
  }

  private async add(row: JobRow, work: JobWork<never, never>): Promise<void> {
    let order: unknown
    try {
      order = await work.prepare(row)
    } catch (err) {
      return this.fail(row, err instanceof Error ? err.message : String(err), err)
    }
    if (order === null) {
      await this.db
        .updateTable('jobs')
        .set({ status: 'done', finished_at: nowIso() })
        .where('id', '=', row.id)
        .execute()
      return
    }
    this.orders.set(row.id, { row, order })
    const data: QueuedJob = { jobId: row.id, refId: row.ref_id, order }
    // A thrown error ends the job (as in this process); a worker that dies is another matter: its
    // job stalls and goes back to the queue (the workers' maxStalledCount).
    await this.queues.get(row.kind as JobKind)!.add(row.kind, data, {
      jobId: this.bullId(row.id),
      attempts: 1,
      removeOnComplete: { age: 24 * 3600 },
      removeOnFail: { age: 7 * 24 * 3600 },
    })
  }

  /** Records a running job's answer once; adds it again when Redis does not know it. */
  private async settle(kind: JobKind, id: number): Promise<void> {
    if (this.busy.has(id) || this.stopped) return
    this.busy.add(id)
    try {
      const row = await this.db
        .selectFrom('jobs')
        .selectAll()
        .where('id', '=', id)
        .where('status', '=', 'running')
        .executeTakeFirst()
      if (!row) return
      const work = this.works[kind]
      const job = await Job.fromId<QueuedJob>(this.queues.get(kind)!, this.bullId(id))
      if (!job) return this.add(row, work) // claimed, then the process stopped before Redis had it
      const state = await job.getState()
      if (state === 'completed') {
        try {
          await work.record(row, job.data.order as never, job.returnvalue as never)
        } catch (err) {
          return this.fail(row, err instanceof Error ? err.message : String(err), err)
        }
        await this.db.updateTable('jobs').set({ status: 'done', finished_at: nowIso() }).where('id', '=', id).execute()
        this.orders.delete(id)
      } else if (state === 'failed') {
        const message = job.failedReason || 'the worker gave no reason'
        await this.fail(row, message, new Error(message))
      } else if (!this.orders.has(id)) {
        this.orders.set(id, { row, order: job.data.order })
      }
    } finally {
      this.busy.delete(id)
    }
  }

  private async fail(row: JobRow, message: string, err?: unknown): Promise<void> {
    await this.db
      .updateTable('jobs')
      .set({ status: 'failed', error: message, finished_at: nowIso() })
      .where('id', '=', row.id)
      .execute()
    this.orders.delete(row.id)
    await this.works[row.kind as JobKind]?.failed?.(row, message, err)
  }

  async idle(): Promise<void> {
    while (this.work.size) await Promise.allSettled([...this.work])
  }

  /** Stops dispatching and listening; jobs keep running in the workers and are recorded at the next start. */
  async stop(graceMs = 3000): Promise<void> {
    this.stopped = true
    if (this.timer) clearInterval(this.timer)
    await Promise.race([this.idle(), new Promise((r) => setTimeout(r, graceMs).unref())])
    await Promise.allSettled(this.events.map((e) => e.close()))
    await Promise.allSettled([...this.queues.values()].map((q) => q.close()))
  }
}
