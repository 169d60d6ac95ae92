import { Kysely, sql } from 'kysely'

// Capture sessions, source devices, takes, their device links, and durable jobs.
// Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  const now = sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`

  await db.schema
    .createTable('sources')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('kind', 'text', (c) => c.notNull())
    .addColumn('make_model', 'text')
    .addColumn('notes', 'text')
    .addColumn('created_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .execute()

  await db.schema
    .createTable('capture_sessions')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('title', 'text', (c) => c.notNull())
    .addColumn('date', 'text', (c) => c.notNull())
    .addColumn('location', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('pickup', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('gain_db', 'real')
    .addColumn('recorder', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('rig_notes', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('default_source_id', 'integer', (c) => c.references('sources.id').onDelete('set null'))
    .addColumn('default_state', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('created_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('updated_at', 'text', (c) => c.notNull().defaultTo(now))
    .execute()

  await db.schema
    .createTable('takes')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('session_id', 'integer', (c) => c.notNull().references('capture_sessions.id').onDelete('restrict'))
    .addColumn('uploader_id', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('filename', 'text', (c) => c.notNull())
    .addColumn('title', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('description', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('notes', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('audio_path', 'text', (c) => c.notNull())
    .addColumn('size_bytes', 'integer', (c) => c.notNull())
    .addColumn('sha256', 'text', (c) => c.notNull().unique())
    .addColumn('status', 'text', (c) => c.notNull().defaultTo('queued'))
    .addColumn('progress', 'real', (c) => c.notNull().defaultTo(0))
    .addColumn('error', 'text')
    .addColumn('format_json', 'text')
    .addColumn('analysis_json', 'text')
    .addColumn('thumb_json', 'text')
    // Copies of the measurements the library filters and sorts on.
    .addColumn('duration_seconds', 'real')
    .addColumn('sample_rate', 'integer')
    .addColumn('channels', 'integer')
    .addColumn('bits_per_sample', 'integer')
    .addColumn('integrated_lufs', 'real')
    .addColumn('true_peak_dbtp', 'real')
    .addColumn('loudness_range_lu', 'real')
    .addColumn('sample_peak_dbfs', 'real')
    .addColumn('noise_floor_dbfs', 'real')
    .addColumn('hum_hz', 'integer')
    .addColumn('bext_description', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('updated_at', 'text', (c) => c.notNull().defaultTo(now))
    .execute()
  await db.schema.createIndex('takes_session').on('takes').column('session_id').execute()
  await db.schema.createIndex('takes_status').on('takes').column('status').execute()

  await db.schema
    .createTable('take_sources')
    .addColumn('take_id', 'integer', (c) => c.notNull().references('takes.id').onDelete('cascade'))
    .addColumn('source_id', 'integer', (c) => c.notNull().references('sources.id').onDelete('restrict'))
    .addColumn('state', 'text', (c) => c.notNull().defaultTo(''))
    .addPrimaryKeyConstraint('take_sources_pk', ['take_id', 'source_id'])
    .execute()
  await db.schema.createIndex('take_sources_source').on('take_sources').column('source_id').execute()

  await db.schema
    .createTable('take_tags')
    .addColumn('take_id', 'integer', (c) => c.notNull().references('takes.id').onDelete('cascade'))
    .addColumn('tag', 'text', (c) => c.notNull())
    .addPrimaryKeyConstraint('take_tags_pk', ['take_id', 'tag'])
    .execute()
  await db.schema.createIndex('take_tags_tag').on('take_tags').column('tag').execute()

  // The history of a take: uploaded, measured, edited, tagged, commented… with who and when.
  await db.schema
    .createTable('take_events')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('take_id', 'integer', (c) => c.notNull().references('takes.id').onDelete('cascade'))
    .addColumn('user_id', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('kind', 'text', (c) => c.notNull())
    .addColumn('summary', 'text', (c) => c.notNull())
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .execute()
  await db.schema.createIndex('take_events_take').on('take_events').column('take_id').execute()

  await db.schema
    .createTable('jobs')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('kind', 'text', (c) => c.notNull())
    .addColumn('ref_id', 'integer', (c) => c.notNull())
    .addColumn('status', 'text', (c) => c.notNull().defaultTo('queued'))
    .addColumn('progress', 'real', (c) => c.notNull().defaultTo(0))
    .addColumn('error', 'text')
    .addColumn('attempts', 'integer', (c) => c.notNull().defaultTo(0))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('started_at', 'text')
    .addColumn('finished_at', 'text')
    .execute()
  await db.schema.createIndex('jobs_status').on('jobs').columns(['status', 'id']).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const t of ['jobs', 'take_events', 'take_tags', 'take_sources', 'takes', 'capture_sessions', 'sources'])
    await db.schema.dropTable(t).execute()
}
