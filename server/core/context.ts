import type { Config } from './config'
import type { Db } from './database'
import type { Storage } from './storage'
import type { Mailer } from '../mail/mailer'
import type { JobQueue } from '../jobs/queue'
import type { HeavyWork } from './heavy-work'

/** What every feature's routes and services are handed: no globals. */
export interface AppContext {
  config: Config
  db: Db
  mailer: Mailer
  storage: Storage
  /** Durable jobs: in this process (the jobs table), or through Redis to `npm run worker` processes. */
  jobs: JobQueue
  /** CPU-heavy work for requests, on worker threads with a per-user limit. */
  heavy: HeavyWork
}
