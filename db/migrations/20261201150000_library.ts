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

  // Library search. Take rows are wide (each holds its whole analysis), so
  // filters and sorts read this narrow covering index instead of the rows.
  await db.schema.createIndex('takes_facets').on('takes').columns(FACETS).execute()
  // Tag and device conditions read take ids straight from their indexes.
  await db.schema.dropIndex('take_tags_tag').execute()
  await db.schema.createIndex('take_tags_tag_take').on('take_tags').columns(['tag', 'take_id']).execute()
  await db.schema.dropIndex('take_sources_source').execute()
  await db.schema
    .createIndex('take_sources_source_take')
    .on('take_sources')
    .columns(['source_id', 'take_id', 'state'])
    .execute()
}

const FACETS = [
  'status',
  'hum_hz',
  'sample_rate',
  'channels',
  'session_id',
  'uploader_id',
  'duration_seconds',
  'integrated_lufs',
  'true_peak_dbtp',
  'loudness_range_lu',
  'sample_peak_dbfs',
  'noise_floor_dbfs',
  'created_at',
  'title',
  'filename',
]

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropIndex('take_sources_source_take').execute()
  await db.schema.createIndex('take_sources_source').on('take_sources').column('source_id').execute()
  await db.schema.dropIndex('take_tags_tag_take').execute()
  await db.schema.createIndex('take_tags_tag').on('take_tags').column('tag').execute()
  await db.schema.dropIndex('takes_facets').execute()
  await db.schema.dropIndex('take_events_take_time').execute()
  await db.schema.dropTable('comments').execute()
  await db.schema.dropTable('regions').execute()
}
