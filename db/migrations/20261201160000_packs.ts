import { Kysely, sql } from 'kysely'

// Sample packs: curated items, numbered immutable builds with their rendered
// items, followers, and share links for people without an account.
// Frozen in time: imports nothing from the app. (A pack item keeps its range and
// an optional region id as a plain integer, so it does not depend on regions.)
export async function up(db: Kysely<any>): Promise<void> {
  const now = sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`

  await db.schema
    .createTable('packs')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('description', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('licence_text', 'text', (c) => c.notNull().defaultTo(''))
    .addColumn('naming_template', 'text', (c) => c.notNull())
    .addColumn('settings_json', 'text', (c) => c.notNull())
    .addColumn('created_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('updated_at', 'text', (c) => c.notNull().defaultTo(now))
    .execute()

  await db.schema
    .createTable('pack_items')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('pack_id', 'integer', (c) => c.notNull().references('packs.id').onDelete('cascade'))
    .addColumn('take_id', 'integer', (c) => c.notNull().references('takes.id').onDelete('cascade'))
    .addColumn('region_id', 'integer')
    .addColumn('position', 'integer', (c) => c.notNull())
    .addColumn('start_seconds', 'real')
    .addColumn('end_seconds', 'real')
    .addColumn('name', 'text')
    .addColumn('kind', 'text', (c) => c.notNull().defaultTo('one-shot'))
    .addColumn('settings_json', 'text')
    // Levels of the range before rendering (null until measured, or for silence).
    .addColumn('source_lufs', 'real')
    .addColumn('source_true_peak_dbtp', 'real')
    .addColumn('source_lra_lu', 'real')
    .addColumn('source_measured_from', 'text')
    .addColumn('created_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('updated_at', 'text', (c) => c.notNull().defaultTo(now))
    .addCheckConstraint(
      'pack_items_range',
      sql`start_seconds IS NULL OR end_seconds IS NULL OR end_seconds > start_seconds`,
    )
    .execute()
  await db.schema.createIndex('pack_items_pack').on('pack_items').columns(['pack_id', 'position']).execute()
  await db.schema.createIndex('pack_items_take').on('pack_items').column('take_id').execute()

  await db.schema
    .createTable('pack_builds')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('pack_id', 'integer', (c) => c.notNull().references('packs.id').onDelete('cascade'))
    .addColumn('version', 'integer', (c) => c.notNull())
    .addColumn('status', 'text', (c) => c.notNull().defaultTo('queued'))
    .addColumn('progress', 'real', (c) => c.notNull().defaultTo(0))
    .addColumn('job_id', 'integer')
    // Everything the build renders, frozen when it was asked for: builds are immutable.
    .addColumn('snapshot_json', 'text', (c) => c.notNull())
    .addColumn('item_count', 'integer', (c) => c.notNull())
    .addColumn('zip_path', 'text')
    .addColumn('size_bytes', 'integer')
    .addColumn('sha256', 'text')
    .addColumn('error', 'text')
    .addColumn('failed_item_position', 'integer')
    .addColumn('failed_item_id', 'integer')
    .addColumn('failed_item_name', 'text')
    .addColumn('created_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addColumn('started_at', 'text')
    .addColumn('finished_at', 'text')
    .addColumn('published_at', 'text')
    .addColumn('published_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addUniqueConstraint('pack_builds_version', ['pack_id', 'version'])
    .execute()

  await db.schema
    .createTable('pack_build_items')
    .addColumn('build_id', 'integer', (c) => c.notNull().references('pack_builds.id').onDelete('cascade'))
    .addColumn('position', 'integer', (c) => c.notNull())
    // No foreign keys: a build outlives edits of the pack and the library.
    .addColumn('item_id', 'integer')
    .addColumn('take_id', 'integer', (c) => c.notNull())
    .addColumn('file_name', 'text', (c) => c.notNull())
    .addColumn('size_bytes', 'integer', (c) => c.notNull())
    .addColumn('sha256', 'text', (c) => c.notNull())
    .addColumn('duration_seconds', 'real', (c) => c.notNull())
    .addColumn('sample_rate', 'integer', (c) => c.notNull())
    .addColumn('bit_depth', 'integer', (c) => c.notNull())
    .addColumn('channels', 'integer', (c) => c.notNull())
    .addColumn('gain_db', 'real', (c) => c.notNull())
    .addColumn('integrated_lufs', 'real')
    .addColumn('true_peak_dbtp', 'real')
    .addColumn('loudness_range_lu', 'real')
    .addColumn('under_target_db', 'real')
    .addPrimaryKeyConstraint('pack_build_items_pk', ['build_id', 'position'])
    .execute()
  await db.schema.createIndex('pack_build_items_item').on('pack_build_items').column('item_id').execute()

  await db.schema
    .createTable('pack_follows')
    .addColumn('pack_id', 'integer', (c) => c.notNull().references('packs.id').onDelete('cascade'))
    .addColumn('user_id', 'integer', (c) => c.notNull().references('users.id').onDelete('cascade'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .addPrimaryKeyConstraint('pack_follows_pk', ['pack_id', 'user_id'])
    .execute()

  await db.schema
    .createTable('pack_share_links')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('build_id', 'integer', (c) => c.notNull().references('pack_builds.id').onDelete('cascade'))
    .addColumn('nonce', 'text', (c) => c.notNull())
    .addColumn('expires_at', 'text', (c) => c.notNull())
    .addColumn('max_downloads', 'integer')
    .addColumn('downloads', 'integer', (c) => c.notNull().defaultTo(0))
    .addColumn('revoked_at', 'text')
    .addColumn('last_download_at', 'text')
    .addColumn('created_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(now))
    .execute()
  await db.schema.createIndex('pack_share_links_build').on('pack_share_links').column('build_id').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const t of ['pack_share_links', 'pack_follows', 'pack_build_items', 'pack_builds', 'pack_items', 'packs'])
    await db.schema.dropTable(t).execute()
}
