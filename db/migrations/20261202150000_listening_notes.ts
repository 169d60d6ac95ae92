import { Kysely, sql } from 'kysely'

// Comments become listening notes: a note may be pinned to a frequency band
// (low_hz–high_hz, both or neither) as well as a time, and may carry a trade
// outcome (keep, trim, re-take, reject). Existing comments stay as they are:
// notes at a time (or on a region), with no band and no outcome.
// Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('comments').addColumn('low_hz', 'real').execute()
  await db.schema.alterTable('comments').addColumn('high_hz', 'real').execute()
  await db.schema
    .alterTable('comments')
    .addColumn('outcome', 'text', (c) => c.check(sql`outcome IN ('keep', 'trim', 're-take', 'reject')`))
    .execute()
  // The library's "takes with a keep note" filter reads take ids straight from here.
  await db.schema
    .createIndex('comments_outcome_take')
    .on('comments')
    .columns(['outcome', 'take_id'])
    .where(sql.ref('outcome'), 'is not', null)
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropIndex('comments_outcome_take').execute()
  await db.schema.alterTable('comments').dropColumn('outcome').execute()
  await db.schema.alterTable('comments').dropColumn('high_hz').execute()
  await db.schema.alterTable('comments').dropColumn('low_hz').execute()
}
