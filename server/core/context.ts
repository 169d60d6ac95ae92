import type { Config } from './config'
import type { Db } from './database'
import type { Storage } from './storage'
import type { Mailer } from '../mail/mailer'
import type { JobRunner } from '../jobs/job-runner'
import type { HeavyWork } from './heavy-work'

/** What every feature's routes and services are handed: no globals. */
export interface AppContext {
  config: Config
  db: Db
  mailer: Mailer
  storage: Storage
  jobs: JobRunner
  /** CPU-heavy work for requests, on worker threads with a per-user limit. */
  heavy: HeavyWork
}
