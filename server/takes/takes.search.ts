import { sql, type SelectQueryBuilder } from 'kysely'
import { normalizeTag } from '@shared/schemas/library'
import type { TakeQuery, TakeSort } from '@shared/schemas/takes'
import type { Database } from '../../db/schema'
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
  return words.slice(0, 32).map((w) => `"${w.replace(/"/g, '""')}"*`).join(' ')
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

/** Columns that are never NULL: they sort on their index without the "unmeasured last" term. */
const NOT_NULL = new Set<TakeSort>(['createdAt', 'title', 'filename', 'session', 'status'])

// eslint-disable-next-line @typescript-eslint/no-explicit-any
type TakesQuery<O> = SelectQueryBuilder<Database, 'takes' | any, O>

/**
 * Every filter of GET /api/takes as conditions on `takes` alone: repeated
 * sourceId and tag values must all hold, repeated sourceKind values are
 * alternatives. Device and tag conditions are sets of take ids read from their
 * indexes, so they narrow the scan instead of being checked row by row.
 */
function applyFilters<O>(base: TakesQuery<O>, q: TakeQuery, fts: string | undefined): TakesQuery<O> {
  let b = base
  if (fts) b = b.where('takes.id', 'in', sql<number>`(SELECT rowid FROM take_fts WHERE take_fts MATCH ${fts})`)
  for (const id of new Set(q.sourceId ?? []))
    b = b.where('takes.id', 'in', (eb) => eb.selectFrom('take_sources').select('take_sources.take_id').where('take_sources.source_id', '=', id))
  if (q.sourceKind?.length) {
    const kinds = [...new Set(q.sourceKind)]
    b = b.where('takes.id', 'in', (eb) =>
      eb
        .selectFrom('take_sources')
        .innerJoin('sources', 'sources.id', 'take_sources.source_id')
        .select('take_sources.take_id')
        .where('sources.kind', 'in', kinds),
    )
  }
  for (const tag of new Set((q.tag ?? []).map(normalizeTag)))
    b = b.where('takes.id', 'in', (eb) => eb.selectFrom('take_tags').select('take_tags.take_id').where('take_tags.tag', '=', tag))
  if (q.sessionId) b = b.where('takes.session_id', '=', q.sessionId)
  if (q.uploaderId) b = b.where('takes.uploader_id', '=', q.uploaderId)
  if (q.sampleRate) b = b.where('takes.sample_rate', '=', q.sampleRate)
  if (q.channels) b = b.where('takes.channels', '=', q.channels)
  if (q.minDuration !== undefined) b = b.where('takes.duration_seconds', '>=', q.minDuration)
  if (q.maxDuration !== undefined) b = b.where('takes.duration_seconds', '<=', q.maxDuration)
  if (q.minLufs !== undefined) b = b.where('takes.integrated_lufs', '>=', q.minLufs)
  if (q.maxLufs !== undefined) b = b.where('takes.integrated_lufs', '<=', q.maxLufs)
  if (q.minTruePeak !== undefined) b = b.where('takes.true_peak_dbtp', '>=', q.minTruePeak)
  if (q.maxTruePeak !== undefined) b = b.where('takes.true_peak_dbtp', '<=', q.maxTruePeak)
  if (q.hum === '50' || q.hum === '60') b = b.where('takes.hum_hz', '=', Number(q.hum))
  if (q.hum === 'none') b = b.where('takes.hum_hz', 'is', null).where('takes.status', '=', 'ready')
  if (q.status) b = b.where('takes.status', '=', q.status)
  return b
}

/**
 * One page of takes for GET /api/takes, and the total that matches.
 *
 * Three short queries instead of one wide one: the count runs on `takes`
 * alone; the page is chosen as bare ids (so a deep OFFSET walks an index, not
 * full rows); only the page's rows are then read in full.
 */
export async function searchTakeRows(db: Db, q: TakeQuery): Promise<{ rows: TakeJoined[]; total: number }> {
  const fts = q.q?.trim() ? ftsQuery(q.q) : undefined
  if (fts === null) return { rows: [], total: 0 }

  const counted = await applyFilters(db.selectFrom('takes'), q, fts)
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .executeTakeFirstOrThrow()
  const total = Number(counted.n)
  const offset = (q.page - 1) * q.pageSize
  if (total === 0 || offset >= total) return { rows: [], total }

  // Relevance needs words to rank by; without them the list is newest first.
  const sort: TakeSort = q.sort === 'relevance' && !fts ? 'createdAt' : (q.sort ?? (fts ? 'relevance' : 'createdAt'))
  const order = q.order ?? (sort === 'createdAt' ? 'desc' : 'asc')

  let ids: number[] = []
  if (sort === 'relevance' && fts) {
    // bm25 is smaller for better matches; computed once per match by joining the match set.
    const page = applyFilters(
      db
        .selectFrom('takes')
        .innerJoin(sql<{ rowid: number; score: number }>`(SELECT rowid, bm25(take_fts) AS score FROM take_fts WHERE take_fts MATCH ${fts})`.as('m'), 'm.rowid', 'takes.id')
        .select('takes.id'),
      q,
      undefined,
    )
    ids = (await page.orderBy('m.score', order).orderBy('takes.id', order).limit(q.pageSize).offset(offset).execute()).map((r) => r.id)
  } else if (sort !== 'relevance') {
    let page = applyFilters(db.selectFrom('takes').select('takes.id'), q, fts)
    if (sort === 'session') page = page.innerJoin('capture_sessions', 'capture_sessions.id', 'takes.session_id')
    const col = sql.ref(SORT_COLUMNS[sort])
    // Unmeasured takes (null numbers) sort last either way.
    if (!NOT_NULL.has(sort)) page = page.orderBy(sql`${col} IS NULL`)
    ids = (await page.orderBy(col, order).orderBy('takes.id', order).limit(q.pageSize).offset(offset).execute()).map((r) => r.id)
  }
  if (!ids.length) return { rows: [], total }

  const rows = await selectTakes(db).where('takes.id', 'in', ids).execute()
  const byId = new Map(rows.map((r) => [r.id, r]))
  return { rows: ids.map((id) => byId.get(id)).filter((r): r is TakeJoined => !!r), total }
}
