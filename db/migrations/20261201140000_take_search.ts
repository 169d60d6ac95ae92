import { Kysely, sql } from 'kysely'

// Full-text search over what a take is: its own words, tags, devices and states,
// its capture session and its bext description. One FTS5 row per take (rowid =
// take id), kept current by triggers on every table that feeds it.
// Frozen in time: imports nothing from the app.

const reindex = (where: string) => `
  DELETE FROM take_fts WHERE rowid IN (SELECT t.id FROM takes t WHERE ${where});
  INSERT INTO take_fts(rowid, title, description, notes, tags, sources, session, bext)
  SELECT t.id, t.title || ' ' || t.filename, t.description, t.notes,
    (SELECT coalesce(group_concat(tag, ' '), '') FROM take_tags WHERE take_id = t.id),
    (SELECT coalesce(group_concat(s.name || ' ' || coalesce(s.make_model, '') || ' ' || ts.state, ' '), '')
       FROM take_sources ts JOIN sources s ON s.id = ts.source_id WHERE ts.take_id = t.id),
    (SELECT title || ' ' || location FROM capture_sessions WHERE id = t.session_id),
    t.bext_description
  FROM takes t WHERE ${where};`

const TRIGGERS: [string, string, string][] = [
  ['take_fts_take_insert', 'AFTER INSERT ON takes', reindex('t.id = NEW.id')],
  [
    'take_fts_take_update',
    'AFTER UPDATE OF title, filename, description, notes, bext_description, session_id ON takes',
    reindex('t.id = NEW.id'),
  ],
  ['take_fts_take_delete', 'AFTER DELETE ON takes', 'DELETE FROM take_fts WHERE rowid = OLD.id;'],
  ['take_fts_tag_insert', 'AFTER INSERT ON take_tags', reindex('t.id = NEW.take_id')],
  ['take_fts_tag_delete', 'AFTER DELETE ON take_tags', reindex('t.id = OLD.take_id')],
  ['take_fts_link_insert', 'AFTER INSERT ON take_sources', reindex('t.id = NEW.take_id')],
  ['take_fts_link_update', 'AFTER UPDATE ON take_sources', reindex('t.id = NEW.take_id')],
  ['take_fts_link_delete', 'AFTER DELETE ON take_sources', reindex('t.id = OLD.take_id')],
  [
    'take_fts_source_update',
    'AFTER UPDATE OF name, make_model ON sources',
    reindex('t.id IN (SELECT take_id FROM take_sources WHERE source_id = NEW.id)'),
  ],
  ['take_fts_session_update', 'AFTER UPDATE OF title, location ON capture_sessions', reindex('t.session_id = NEW.id')],
]

export async function up(db: Kysely<any>): Promise<void> {
  await sql`CREATE VIRTUAL TABLE take_fts USING fts5(title, description, notes, tags, sources, session, bext, tokenize = 'unicode61 remove_diacritics 2')`.execute(
    db,
  )

  for (const [name, when, body] of TRIGGERS) {
    await sql.raw(`CREATE TRIGGER ${name} ${when} BEGIN ${body} END`).execute(db)
  }

  for (const col of [
    'duration_seconds',
    'integrated_lufs',
    'true_peak_dbtp',
    'loudness_range_lu',
    'created_at',
    'sample_rate',
    'hum_hz',
    'uploader_id',
    'title',
  ]) {
    await db.schema.createIndex(`takes_${col}`).on('takes').column(col).execute()
  }
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const col of [
    'duration_seconds',
    'integrated_lufs',
    'true_peak_dbtp',
    'loudness_range_lu',
    'created_at',
    'sample_rate',
    'hum_hz',
    'uploader_id',
    'title',
  ]) {
    await db.schema.dropIndex(`takes_${col}`).execute()
  }
  for (const [name] of TRIGGERS) await sql.raw(`DROP TRIGGER ${name}`).execute(db)
  await sql`DROP TABLE take_fts`.execute(db)
}
