import type { Config } from './config'
import type { Db } from './database'
import type { Mailer } from '../mail/mailer'

/** What every feature's routes and services are handed: no globals. */
export interface AppContext {
  config: Config
  db: Db
  mailer: Mailer
}
