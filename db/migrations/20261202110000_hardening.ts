import { Kysely, sql } from 'kysely'

// Hardening (nothing leaks):
// - share links remember how far their last counted download got, so only a
//   later resume of it goes uncounted;
// - sessions carry their user (indexed: sign everyone out at once) and when they
//   began (an absolute lifetime beside the rolling one);
// - a mention mail is sent once per comment and person, whatever the edits.
// Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('pack_share_links').addColumn('open_download_bytes', 'integer').execute()

  await db.schema.alterTable('sessions').addColumn('user_id', 'integer').execute()
  await db.schema
    .alterTable('sessions')
    .addColumn('created_at', 'integer', (c) => c.notNull().defaultTo(0))
    .execute()
  await sql`UPDATE sessions SET user_id = json_extract(data, '$.passport.user'), created_at = CAST(strftime('%s','now') AS INTEGER) * 1000`.execute(
    db,
  )
  await db.schema.createIndex('sessions_user_id').on('sessions').column('user_id').execute()

  await db.schema
    .createTable('comment_mention_mails')
    .addColumn('comment_id', 'integer', (c) => c.notNull().references('comments.id').onDelete('cascade'))
    .addColumn('user_id', 'integer', (c) => c.notNull().references('users.id').onDelete('cascade'))
    .addPrimaryKeyConstraint('comment_mention_mails_pk', ['comment_id', 'user_id'])
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.dropTable('comment_mention_mails').execute()
  await db.schema.dropIndex('sessions_user_id').execute()
  await db.schema.alterTable('sessions').dropColumn('created_at').execute()
  await db.schema.alterTable('sessions').dropColumn('user_id').execute()
  await db.schema.alterTable('pack_share_links').dropColumn('open_download_bytes').execute()
}
