import { Kysely, sql } from 'kysely'

// Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema
    .createTable('users')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('email', 'text', (c) => c.notNull().unique())
    .addColumn('name', 'text', (c) => c.notNull())
    .addColumn('role', 'text', (c) => c.notNull())
    .addColumn('password_hash', 'text', (c) => c.notNull())
    .addColumn('active', 'integer', (c) => c.notNull().defaultTo(1))
    .addColumn('created_at', 'text', (c) => c.notNull().defaultTo(sql`(strftime('%Y-%m-%dT%H:%M:%fZ','now'))`))
    .addColumn('last_login_at', 'text')
    .execute()

  await db.schema
    .createTable('sessions')
    .addColumn('sid', 'text', (c) => c.primaryKey())
    .addColumn('data', 'text', (c) => c.notNull())
    .addColumn('expires_at', 'integer', (c) => c.notNull())
    .execute()
  await db.schema.createIndex('sessions_expires_at').on('sessions').column('expires_at').execute()

  await db.schema
    .createTable('settings')
    .addColumn('key', 'text', (c) => c.primaryKey())
    .addColumn('value', 'text', (c) => c.notNull())
    .execute()

  await db.schema
    .createTable('invitations')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('email', 'text', (c) => c.notNull())
    .addColumn('role', 'text', (c) => c.notNull())
    .addColumn('token_hash', 'text', (c) => c.notNull().unique())
    .addColumn('invited_by', 'integer', (c) => c.references('users.id').onDelete('set null'))
    .addColumn('created_at', 'text', (c) => c.notNull())
    .addColumn('expires_at', 'text', (c) => c.notNull())
    .addColumn('accepted_at', 'text')
    .execute()

  await db.schema
    .createTable('password_resets')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('user_id', 'integer', (c) => c.notNull().references('users.id').onDelete('cascade'))
    .addColumn('token_hash', 'text', (c) => c.notNull().unique())
    .addColumn('created_at', 'text', (c) => c.notNull())
    .addColumn('expires_at', 'text', (c) => c.notNull())
    .addColumn('used_at', 'text')
    .execute()

  await db.schema
    .createTable('mail_messages')
    .addColumn('id', 'integer', (c) => c.primaryKey().autoIncrement())
    .addColumn('message_id', 'text')
    .addColumn('from_addr', 'text', (c) => c.notNull())
    .addColumn('to_addr', 'text', (c) => c.notNull())
    .addColumn('subject', 'text', (c) => c.notNull())
    .addColumn('text', 'text', (c) => c.notNull())
    .addColumn('html', 'text')
    .addColumn('received_at', 'text', (c) => c.notNull())
    .execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const t of ['mail_messages', 'password_resets', 'invitations', 'settings', 'sessions', 'users']) {
    await db.schema.dropTable(t).execute()
  }
}
