import fs from 'node:fs'
import path from 'node:path'
import SQLite from 'better-sqlite3'
import { Kysely, Migrator, SqliteDialect } from 'kysely'
import type { Database } from '../../db/schema'
import { migrations } from '../../db/migrations'
import { addIdSetFunction } from './id-sets'

export type Db = Kysely<Database>

/** Opens the SQLite file with WAL, a busy timeout, foreign keys on, and memory-mapped reads with a larger page cache. */
export function openDatabase(file: string): Db {
  if (file !== ':memory:') fs.mkdirSync(path.dirname(file), { recursive: true })
  const sqlite = new SQLite(file)
  sqlite.pragma('journal_mode = WAL')
  sqlite.pragma('busy_timeout = 5000')
  sqlite.pragma('foreign_keys = ON')
  sqlite.pragma('synchronous = NORMAL')
  // The library search walks large indexes (a million takes is a few GB of file): reading pages through a memory
  // map skips a copy per page, and a larger page cache keeps the indexes it walks at hand (64 MiB per connection).
  sqlite.pragma('mmap_size = 1073741824')
  sqlite.pragma('cache_size = -65536')
  addIdSetFunction(sqlite)
  return new Kysely<Database>({ dialect: new SqliteDialect({ database: sqlite }) })
}

export async function migrateToLatest(db: Kysely<any>): Promise<void> {
  const migrator = new Migrator({
    db,
    provider: { getMigrations: async () => migrations },
  })
  const { error, results } = await migrator.migrateToLatest()
  const failed = results?.find((r) => r.status === 'Error')
  if (error || failed) {
    throw new Error(`Database migration failed${failed ? ` at ${failed.migrationName}` : ''}: ${String(error)}`)
  }
}
