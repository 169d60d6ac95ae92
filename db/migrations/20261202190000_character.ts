import { Kysely, sql } from 'kysely'

// Character of a take: the tags the analysis suggests with their confidence (the library's
// character filter reads them), and the sounds-like features (whole-take vector and the
// per-frame mel bands regions are built from). Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('take_character')
    .addColumn('take_id', 'integer', (c) => c.notNull().references('takes.id').onDelete('cascade'))
    .addColumn('tag', 'text', (c) => c.notNull())
    .addColumn('confidence', 'real', (c) => c.notNull())
    .addPrimaryKeyConstraint('take_character_pk', ['take_id', 'tag'])
    .execute()
  await db.schema.createIndex('take_character_tag').on('take_character').columns(['tag', 'confidence']).execute()
  await db.schema
    .createTable('take_features')
    .addColumn('take_id', 'integer', (c) => c.primaryKey().references('takes.id').onDelete('cascade'))
    .addColumn('vector', 'blob', (c) => c.notNull())
    .addColumn('frame_times', 'blob', (c) => c.notNull())
    .addColumn('frame_mel', 'blob', (c) => c.notNull())
    .addColumn('updated_at', 'text', (c) => c.notNull().defaultTo(sql`CURRENT_TIMESTAMP`))
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('take_features').execute()
  await db.schema.dropTable('take_character').execute()
}
