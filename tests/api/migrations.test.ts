import fs from 'node:fs'
import { describe, expect, it } from 'vitest'
import { migrations } from '../../db/migrations'
import { migrateToLatest, openDatabase } from '../../server/core/database'

describe('migrations', () => {
  it('lists every migration file of db/migrations, timestamp-prefixed, in order', () => {
    const files = fs
      .readdirSync(new URL('../../db/migrations', import.meta.url))
      .filter((f) => /^\d{14}_.+\.ts$/.test(f))
      .map((f) => f.replace(/\.ts$/, ''))
    expect(Object.keys(migrations)).toEqual(files.sort())
  })

  it('migrate up to the latest and down to nothing on a real SQLite file', async () => {
    const file = `${fs.mkdtempSync('/tmp/sf-mig-')}/m.sqlite`
    const db = openDatabase(file)
    await migrateToLatest(db)
    const tables = await db.introspection.getTables()
    expect(tables.map((t) => t.name)).toContain('users')
    const { Migrator, NO_MIGRATIONS } = await import('kysely')
    const migrator = new Migrator({ db, provider: { getMigrations: async () => migrations } })
    const down = await migrator.migrateTo(NO_MIGRATIONS)
    expect(down.error).toBeUndefined()
    expect((await db.introspection.getTables()).map((t) => t.name)).not.toContain('users')
    await db.destroy()
  })
})
