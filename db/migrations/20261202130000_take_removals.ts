import { Kysely, sql } from 'kysely'

// Removed takes: a take stays in `takes` (audio and measurements kept, so it can
// be restored) while a row here says who removed it and when; lists and counts
// leave such takes out, and a sweep purges them with their files after 30 days.
// Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('take_removals')
    .addColumn('take_id', 'integer', (c) => c.primaryKey().references('takes.id').onDelete('cascade'))
    .addColumn('removed_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('removed_at', 'text', (c) => c.notNull().defaultTo(sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`))
    .execute()
  await db.schema.createIndex('take_removals_time').on('take_removals').column('removed_at').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('take_removals').execute()
}
