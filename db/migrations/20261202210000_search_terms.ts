import { Kysely, sql } from 'kysely'

// Library search at a million takes, third step. The words a person types
// are prefixes ("whin" finds "whine"). FTS5 answers a prefix by merging the
// full lists of every term that starts with it, up front, in each statement
// that uses it; a whole term is read lazily instead, seeks by take id and
// stops at a LIMIT. This table lists the full-text index's terms, so a search
// can spell each typed word out as the whole terms it stands for, once.
// Frozen in time: imports nothing from the app.

export async function up(db: Kysely<any>): Promise<void> {
  await sql`CREATE VIRTUAL TABLE take_fts_terms USING fts5vocab(take_fts, 'row')`.execute(db)
}

export async function down(db: Kysely<any>): Promise<void> {
  await sql`DROP TABLE take_fts_terms`.execute(db)
}
