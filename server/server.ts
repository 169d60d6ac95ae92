import http from 'node:http'
import type { AddressInfo } from 'node:net'
import { checkDemoIsLocal, loadConfig, type Config } from './core/config'
import { migrateToLatest, openDatabase } from './core/database'
import { createMailer } from './mail/mailer'
import { createApp } from './app'
import { seedDemo } from './demo/seed'
import { startDemoPacks } from './demo/demo-packs'
import type { AppContext } from './core/context'
import { openStorage } from './core/storage'
import { lockData, type DataLock } from './core/data-lock'
import { JobRunner } from './jobs/job-runner'
import { localHandler, type JobQueue, type JobWorks } from './jobs/queue'
import { BullJobs } from './jobs/bullmq-queue'
import { analysisJob } from './ingest/analysis.job'
import { buildPackJob } from './packs/builds/build.job'
import { startRemovalSweep } from './takes/takes.removal'
import { createHeavyWork } from './core/heavy-work'
import { audioThreads, holdAudioTasks } from './work/audio-tasks'

export interface RunningServer {
  url: string
  port: number
  ctx: AppContext
  http: http.Server
  /** Settles once the demo's packs are in place (at once when there is no demo library). */
  demoPacks: Promise<void>
  stop(): Promise<void>
}

/** Opens the database, migrates, seeds the demo when asked, starts mail and HTTP. */
export async function startServer(
  overrides: Partial<Config> = {},
  env: NodeJS.ProcessEnv = process.env,
): Promise<RunningServer> {
  const config = loadConfig(env, overrides)
  checkDemoIsLocal(config) // before anything is opened or seeded
  // Before anything touches the data: the partial-upload sweep and the re-queuing of jobs below
  // are safe only when no other server uses the same database and storage.
  const lock = lockData(config.dbFile, config.storageDir)
  try {
    return await startLocked(config, lock)
  } catch (err) {
    lock.release()
    throw err
  }
}

async function startLocked(config: Config, lock: DataLock): Promise<RunningServer> {
  const db = openDatabase(config.dbFile)
  await migrateToLatest(db)
  const mailer = await createMailer(config, db)
  const storage = openStorage(config)
  storage.sweepIncoming()
  // The one audio-task pool of this process (server/work/); the first server in a process sizes it.
  const releaseAudioTasks = holdAudioTasks(config.heavyThreads)
  const heavy = createHeavyWork({ perUser: config.heavyPerUser })
  const ctx: AppContext = { config, db, mailer, storage, jobs: null as unknown as JobQueue, heavy }
  // Takes measured at once: all threads but one, so requests' images and previews keep a thread.
  const measuring = config.analysisWorkers || Math.max(1, audioThreads() - 1)
  const works = { 'analyze-take': analysisJob(ctx, measuring), 'build-pack': buildPackJob(ctx) }
  ctx.jobs = config.redisUrl
    ? new BullJobs(db, works as unknown as JobWorks, config.redisUrl)
    : new JobRunner(db, {
        'analyze-take': localHandler(works['analyze-take'], storage),
        'build-pack': localHandler(works['build-pack'], storage),
      })
  if (config.demo) await seedDemo(ctx)
  if (config.runJobs) await ctx.jobs.start()
  // The demo's published and draft packs need measured takes and a build job, so they come after
  // the jobs start and the server does not wait for them.
  const demoPacks = config.demo && config.demoAudio && config.runJobs ? startDemoPacks(ctx) : null
  // Removed takes older than 30 days are purged with their files, at start and daily.
  const stopRemovalSweep = startRemovalSweep(db, storage)
  const built = await createApp(ctx)
  const server = http.createServer(built.app)
  // Long takes upload for a long time: Node's 5-minute whole-request limit is lifted here and
  // enforced per route instead (server/ingest/slow-bodies.ts: every route but the upload, which
  // has a minimum rate). Headers must still arrive within a minute.
  server.requestTimeout = 0
  server.headersTimeout = 60_000
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject)
    server.listen(config.port, resolve)
  })
  const port = (server.address() as AddressInfo).port
  return {
    url: `http://localhost:${port}`,
    port,
    ctx,
    http: server,
    demoPacks: demoPacks?.done ?? Promise.resolve(),
    async stop() {
      try {
        await demoPacks?.stop()
        await new Promise<void>((resolve) => {
          server.close(() => resolve())
          server.closeAllConnections()
        })
        await ctx.jobs.stop()
        await stopRemovalSweep()
        await releaseAudioTasks()
        await built.close()
        await mailer.close()
        await db.destroy()
      } finally {
        lock.release()
      }
    },
  }
}
