// `npm run worker`: runs analysis and pack-build jobs taken from Redis (BullMQ),
// on this machine or another. It needs REDIS_URL and the storage
// (STRAYFIELD_STORAGE, the same files the API server sees), never the database:
// a job carries what it needs, and the answer goes back through Redis for the
// API server to record. The work runs on this process's audio-task pool.
//
// STRAYFIELD_JOB_LOCK_MS (default 30000): how long a job's lock lasts without
// renewal. A worker killed mid-job stops renewing it; once it runs out, another
// worker's stalled check (every STRAYFIELD_JOB_LOCK_MS too) puts the job back,
// and a worker runs it again from scratch.
import { Worker, type Job } from 'bullmq'
import { loadConfig } from '../core/config'
import { openStorage } from '../core/storage'
import { measureTake, type AnalysisOrder } from '../ingest/analysis.job'
import { performBuild, type BuildJobOrder } from '../packs/builds/build.job'
import { queueName, redisConnection, type QueuedJob } from '../jobs/bullmq-queue'
import type { JobKind } from '../jobs/job-runner'
import type { WorkEnv } from '../jobs/queue'
import { audioThreads, holdAudioTasks } from '../work/audio-tasks'

const config = loadConfig()
if (!config.redisUrl) {
  process.stderr.write('npm run worker needs REDIS_URL (the Redis the API server uses)\n')
  process.exit(2)
}
// The same storage as the API (STORAGE_URL / S3_*): with S3 the audio comes from the bucket, so this
// machine needs no shared folder, only a working copy of its own (STRAYFIELD_STORAGE).
const storage = openStorage(config)
const release = holdAudioTasks(config.heavyThreads)
const lockMs = Number(process.env.STRAYFIELD_JOB_LOCK_MS ?? 30_000)

const performs: Record<JobKind, { concurrency: number; perform(order: unknown, env: WorkEnv): Promise<unknown> }> = {
  'analyze-take': {
    concurrency: config.analysisWorkers || Math.max(1, audioThreads() - 1),
    perform: (o, env) => measureTake(o as AnalysisOrder, env),
  },
  'build-pack': { concurrency: 1, perform: (o, env) => performBuild(o as BuildJobOrder, env) },
}

const workers = (Object.keys(performs) as JobKind[]).map((kind) => {
  const { concurrency, perform } = performs[kind]
  return new Worker<QueuedJob>(
    queueName(kind),
    (job: Job<QueuedJob>, _token?: string, signal?: AbortSignal) =>
      perform(job.data.order, {
        storage,
        signal: signal ?? new AbortController().signal,
        progress: (p) => void job.updateProgress(p).catch(() => undefined),
      }),
    {
      connection: redisConnection(config.redisUrl!),
      concurrency,
      lockDuration: lockMs,
      stalledInterval: lockMs,
      // A job whose worker died goes back to the queue (twice at most), without counting as a failure.
      maxStalledCount: 2,
    },
  )
})
await Promise.all(workers.map((w) => w.waitUntilReady()))
process.stdout.write(`worker ready (${workers.length} queues, storage ${config.storageUrl ?? config.storageDir})\n`)

// Stopping leaves running jobs unfinished: their locks run out and other workers take them up.
async function stop(): Promise<void> {
  await Promise.allSettled(workers.map((w) => w.close(true)))
  await release()
  process.exit(0)
}
process.on('SIGTERM', () => void stop())
process.on('SIGINT', () => void stop())
