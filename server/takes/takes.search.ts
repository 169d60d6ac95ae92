import { sql, type RawBuilder } from 'kysely'
import { normalizeTag } from '@shared/schemas/library'
import { SUGGEST_FROM } from '@shared/schemas/character'
import type { TakeQuery, TakeSort } from '@shared/schemas/takes'
import type { Db } from '../core/database'
import { selectTakes, type TakeJoined } from './takes.repository'

/**
 * User text to an FTS5 query that is always valid: every run of letters or
 * digits becomes a quoted prefix term ("whin"*), joined with AND. Quotes,
 * operators (NEAR, AND, -, *), parentheses and SQL never reach FTS5 syntax.
 * Returns null when the text holds no word at all.
 */
export function ftsQuery(q: string): string | null {
  const words = q.normalize('NFKC').match(/[\p{L}\p{N}]+/gu)
  if (!words?.length) return null
  return words
    .slice(0, 32)
    .map((w) => `"${w.replace(/"/g, '""')}"*`)
    .join(' ')
}

const SORT_COLUMNS: Record<Exclude<TakeSort, 'relevance'>, string> = {
  createdAt: 'takes.created_at',
  title: 'takes.title',
  filename: 'takes.filename',
  session: 'capture_sessions.title',
  duration: 'takes.duration_seconds',
  sampleRate: 'takes.sample_rate',
  channels: 'takes.channels',
  integratedLufs: 'takes.integrated_lufs',
  truePeak: 'takes.true_peak_dbtp',
  loudnessRange: 'takes.loudness_range_lu',
  samplePeak: 'takes.sample_peak_dbfs',
  noiseFloor: 'takes.noise_floor_dbfs',
  hum: 'takes.hum_hz',
  status: 'takes.status',
}

/** Columns that are never NULL: they sort without the "unmeasured last" term (and on their own index). */
const NOT_NULL = new Set<TakeSort>(['createdAt', 'title', 'filename', 'session', 'status'])

/**
 * Every filter of GET /api/takes as a condition on `takes` (parameters bound,
 * never spliced). Repeated sourceId and tag values must all hold; repeated
 * sourceKind values are alternatives.
 */
function filterConditions(q: TakeQuery): RawBuilder<unknown>[] {
  const c: RawBuilder<unknown>[] = []
  for (const id of new Set(q.sourceId ?? []))
    c.push(sql`takes.id IN (SELECT take_id FROM take_sources WHERE source_id = ${id})`)
  if (q.sourceKind?.length) {
    const kinds = [...new Set(q.sourceKind)]
    c.push(
      sql`takes.id IN (SELECT ts.take_id FROM take_sources ts JOIN sources s ON s.id = ts.source_id WHERE s.kind IN (${sql.join(kinds)}))`,
    )
  }
  for (const tag of new Set((q.tag ?? []).map(normalizeTag)))
    c.push(sql`takes.id IN (SELECT take_id FROM take_tags WHERE tag = ${tag})`)
  for (const tag of new Set(q.character ?? []))
    c.push(sql`takes.id IN (SELECT take_id FROM take_character WHERE tag = ${tag} AND confidence >= ${SUGGEST_FROM})`)
  if (q.sessionId) c.push(sql`takes.session_id = ${q.sessionId}`)
  if (q.uploaderId) c.push(sql`takes.uploader_id = ${q.uploaderId}`)
  if (q.sampleRate) c.push(sql`takes.sample_rate = ${q.sampleRate}`)
  if (q.channels) c.push(sql`takes.channels = ${q.channels}`)
  if (q.minDuration !== undefined) c.push(sql`takes.duration_seconds >= ${q.minDuration}`)
  if (q.maxDuration !== undefined) c.push(sql`takes.duration_seconds <= ${q.maxDuration}`)
  if (q.minLufs !== undefined) c.push(sql`takes.integrated_lufs >= ${q.minLufs}`)
  if (q.maxLufs !== undefined) c.push(sql`takes.integrated_lufs <= ${q.maxLufs}`)
  if (q.minTruePeak !== undefined) c.push(sql`takes.true_peak_dbtp >= ${q.minTruePeak}`)
  if (q.maxTruePeak !== undefined) c.push(sql`takes.true_peak_dbtp <= ${q.maxTruePeak}`)
  if (q.minLra !== undefined) c.push(sql`takes.loudness_range_lu >= ${q.minLra}`)
  if (q.maxLra !== undefined) c.push(sql`takes.loudness_range_lu <= ${q.maxLra}`)
  if (q.hum === '50' || q.hum === '60') c.push(sql`takes.hum_hz = ${Number(q.hum)}`)
  if (q.hum === 'none') c.push(sql`takes.hum_hz IS NULL AND takes.status = 'ready'`)
  if (q.status) c.push(sql`takes.status = ${q.status}`)
  // Listening notes' outcome ("takes with a keep note"), from the comments_outcome_take index.
  if (q.noteOutcome)
    c.push(sql`takes.id IN (SELECT take_id FROM comments WHERE outcome = ${q.noteOutcome} AND parent_id IS NULL)`)
  return c
}

const whereAll = (conds: RawBuilder<unknown>[]) => (conds.length ? sql`WHERE ${sql.join(conds, sql` AND `)}` : sql``)

/** Takes in the Removed list never reach a list (see takes.removal.ts); kept apart from the filters so an unfiltered list still walks its sort's own index. */
const notRemoved = (id: RawBuilder<unknown> = sql.ref('takes.id')) =>
  sql`${id} NOT IN (SELECT take_id FROM take_removals)`

/**
 * One page of takes for GET /api/takes, and the total that matches.
 *
 * Takes rows are wide (the whole analysis is stored with them), so filtering
 * never reads them: a filtered query scans the narrow covering index
 * `takes_facets` (every filter and sort column, about 150 bytes a take) and
 * checks tag, device and text conditions against id sets read once from their
 * own indexes. Text alone is counted and ranked inside the full-text index.
 * The page is chosen as bare ids (a deep OFFSET walks an index, not rows), and
 * only the page's rows are then read in full.
 */
export async function searchTakeRows(db: Db, q: TakeQuery): Promise<{ rows: TakeJoined[]; total: number }> {
  const fts = q.q?.trim() ? ftsQuery(q.q) : undefined
  if (fts === null) return { rows: [], total: 0 }

  const filters = filterConditions(q)
  const all = fts ? [sql`takes.id IN (SELECT rowid FROM take_fts WHERE take_fts MATCH ${fts})`, ...filters] : filters
  // With any condition, scan the covering index; with none, let each sort use its own index.
  const from = all.length ? sql`takes INDEXED BY takes_facets` : sql`takes`

  // Relevance needs words to rank by; without them the list is newest first.
  const sort: TakeSort = q.sort === 'relevance' && !fts ? 'createdAt' : (q.sort ?? (fts ? 'relevance' : 'createdAt'))
  const order = sql.raw(q.order ?? (sort === 'createdAt' ? 'desc' : 'asc'))
  const offset = (q.page - 1) * q.pageSize
  const limit = sql`LIMIT ${q.pageSize} OFFSET ${offset}`
  // Where conditions make the scan the cost, the page carries the total with it
  // (a window count over the same scan) instead of scanning twice.
  const windowTotal = sql`count(*) OVER () AS total`

  let idQuery: RawBuilder<{ id: number; total?: number }>
  if (sort === 'relevance') {
    // bm25 is smaller for better matches. The unary + keeps the id set a
    // filter: pushed into FTS5 as a rowid constraint it would rerun the match per id.
    idQuery = filters.length
      ? sql`SELECT m.id, ${windowTotal} FROM (SELECT rowid AS id, bm25(take_fts) AS score FROM take_fts WHERE take_fts MATCH ${fts}) m
            WHERE +m.id IN (SELECT takes.id FROM takes INDEXED BY takes_facets ${whereAll([...filters, notRemoved()])})
            ORDER BY m.score ${order}, m.id ${order} ${limit}`
      : sql`SELECT rowid AS id FROM take_fts WHERE take_fts MATCH ${fts} AND ${notRemoved(sql`rowid`)} ORDER BY bm25(take_fts) ${order}, rowid ${order} ${limit}`
  } else {
    const col = sql.ref(SORT_COLUMNS[sort])
    const join = sort === 'session' ? sql`JOIN capture_sessions ON capture_sessions.id = takes.session_id` : sql``
    // Unmeasured takes (null numbers) sort last either way.
    const nullsLast = NOT_NULL.has(sort) ? sql`` : sql`${col} IS NULL, `
    idQuery = sql`SELECT takes.id AS id${all.length ? sql`, ${windowTotal}` : sql``} FROM ${from} ${join} ${whereAll([...all, notRemoved()])}
                  ORDER BY ${nullsLast}${col} ${order}, takes.id ${order} ${limit}`
  }
  const countQuery: RawBuilder<{ n: number }> =
    fts && !filters.length
      ? sql`SELECT count(*) AS n FROM take_fts WHERE take_fts MATCH ${fts} AND ${notRemoved(sql`rowid`)}`
      : sql`SELECT count(*) AS n FROM ${from} ${whereAll([...all, notRemoved()])}`

  const page = (await idQuery.execute(db)).rows
  const windowed = page.length > 0 && page[0].total !== undefined
  // An empty page past the end still reports the total; the plain count is cheap where no window ran.
  const count = windowed
    ? Number(page[0].total)
    : page.length === 0 && offset === 0
      ? 0
      : Number((await countQuery.execute(db)).rows[0]?.n ?? 0)
  const ids = page.map((r) => r.id)
  if (!ids.length) return { rows: [], total: count }

  const rows = await selectTakes(db).where('takes.id', 'in', ids).execute()
  const byId = new Map(rows.map((r) => [r.id, r]))
  return { rows: ids.map((id) => byId.get(id)).filter((r): r is TakeJoined => !!r), total: count }
}
