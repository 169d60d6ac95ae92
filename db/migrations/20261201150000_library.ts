import { Kysely, sql } from 'kysely'

// Regions of takes (named time ranges) and the team's comment threads on takes,
// optionally pinned to a time or a region.
// Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  const now = sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`

  await db.schema
    .createTable('regions')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('take_id', 'integer', (c) => c.notNull().references('takes.id').onDelete('cascade'))
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('start_seconds', 'real', (c) => c.notNull())
    .addColumn('end_seconds', 'real', (c) => c.notNull())
    .addColumn('created_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('updated_at', 'text', (c) => c.notNull().defaultTo(now))
    .addCheckConstraint('regions_range', sql`start_seconds >= 0 AND end_seconds > start_seconds`)
    .execute()
  await db.schema.createIndex('regions_take').on('regions').columns(['take_id', 'start_seconds']).execute()

  await db.schema
    .createTable('comments')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('take_id', 'integer', (c) => c.notNull().references('takes.id').onDelete('cascade'))
    .addColumn('author_id', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('body', 'text', (c) => c.notNull())
    .addColumn('at_seconds', 'real')
    .addColumn('region_id', 'integer', (c) => c.references('regions.id').onDelete('set null'))
    .addColumn('parent_id', 'integer', (c) => c.references('comments.id').onDelete('cascade'))
    .addColumn('resolved_at', 'text')
    .addColumn('resolved_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('edited_at', 'text')
    .execute()
  await db.schema.createIndex('comments_take').on('comments').columns(['take_id', 'created_at']).execute()
  await db.schema.createIndex('comments_parent').on('comments').column('parent_id').execute()
  await db.schema.createIndex('comments_region').on('comments').column('region_id').execute()
  await db.schema.createIndex('comments_author').on('comments').column('author_id').execute()

  // History lists newest first per take.
  await db.schema.createIndex('take_events_take_time').on('take_events').columns(['take_id', 'created_at']).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropIndex('take_events_take_time').execute()
  await db.schema.dropTable('comments').execute()
  await db.schema.dropTable('regions').execute()
}
