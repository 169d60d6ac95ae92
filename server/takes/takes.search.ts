import { sql, type RawBuilder } from 'kysely'
import { normalizeTag } from '@shared/schemas/library'
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
 * Counts stop here: past it a page says "more than" (`totalCapped`) instead of
 * counting on, so a broad query on a large library never counts every row.
 */
export const COUNT_CAP = 10_000

/**
 * A condition met by a set of take ids read from its own index (the words, a
 * tag, a device). Its ids can drive a query (read the few ids, then their
 * rows), or it can be checked take by take while the query walks its sort
 * index, which is fast when many takes match. Counting its ids up to
 * DRIVER_MAX decides which.
 */
interface SetCondition {
  /** SELECT of the take ids meeting the condition, as column `id`. */
  ids: RawBuilder<unknown>
  /** The same condition for the one take whose id is `id`. */
  holds: (id: RawBuilder<unknown>) => RawBuilder<unknown>
}

/** A set condition with at most this many ids drives the query; sorting that many rows costs a few milliseconds. */
const DRIVER_MAX = 2_000

function setConditions(q: TakeQuery, fts: string | undefined): SetCondition[] {
  const c: SetCondition[] = []
  if (fts)
    c.push({
      ids: sql`SELECT rowid AS id FROM take_fts WHERE take_fts MATCH ${fts}`,
      // A correlated MATCH would rerun the search per take: IN reads the id list once into a temporary index.
      holds: (id) => sql`+${id} IN (SELECT rowid FROM take_fts WHERE take_fts MATCH ${fts})`,
    })
  for (const source of new Set(q.sourceId ?? []))
    c.push({
      ids: sql`SELECT take_id AS id FROM take_sources WHERE source_id = ${source}`,
      holds: (id) => sql`EXISTS (SELECT 1 FROM take_sources WHERE take_id = ${id} AND source_id = ${source})`,
    })
  if (q.sourceKind?.length) {
    const kinds = sql.join([...new Set(q.sourceKind)])
    c.push({
      ids: sql`SELECT DISTINCT ts.take_id AS id FROM take_sources ts JOIN sources s ON s.id = ts.source_id WHERE s.kind IN (${kinds})`,
      holds: (id) =>
        sql`EXISTS (SELECT 1 FROM take_sources ts JOIN sources s ON s.id = ts.source_id WHERE ts.take_id = ${id} AND s.kind IN (${kinds}))`,
    })
  }
  for (const tag of new Set((q.tag ?? []).map(normalizeTag)))
    c.push({
      ids: sql`SELECT take_id AS id FROM take_tags WHERE tag = ${tag}`,
      holds: (id) => sql`EXISTS (SELECT 1 FROM take_tags WHERE take_id = ${id} AND tag = ${tag})`,
    })
  // Listening notes' outcome ("takes with a keep note"), from the comments_outcome_take index.
  if (q.noteOutcome)
    c.push({
      ids: sql`SELECT DISTINCT take_id AS id FROM comments WHERE outcome = ${q.noteOutcome} AND parent_id IS NULL`,
      holds: (id) =>
        sql`EXISTS (SELECT 1 FROM comments WHERE take_id = ${id} AND outcome = ${q.noteOutcome} AND parent_id IS NULL)`,
    })
  return c
}

/** Filters on the take's own columns (parameters bound, never spliced). */
function columnConditions(q: TakeQuery): RawBuilder<unknown>[] {
  const c: RawBuilder<unknown>[] = []
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
  return c
}

const whereAll = (conds: RawBuilder<unknown>[]) => (conds.length ? sql`WHERE ${sql.join(conds, sql` AND `)}` : sql``)

/** Takes in the Removed list never reach a list (see takes.removal.ts). */
const notRemoved = (id: RawBuilder<unknown>) => sql`${id} NOT IN (SELECT take_id FROM take_removals)`

/** How many ids a set condition has, counting no further than DRIVER_MAX + 1. */
async function idsUpTo(db: Db, c: SetCondition): Promise<number> {
  const r = await sql<{ n: number }>`SELECT count(*) AS n FROM (${c.ids} LIMIT ${DRIVER_MAX + 1})`.execute(db)
  return Number(r.rows[0].n)
}

export interface SearchResult {
  rows: TakeJoined[]
  /** Matches, exact up to the count limit; the limit itself when `totalCapped`. */
  total: number
  /** True when more takes match than `total` says (counting stopped there). */
  totalCapped: boolean
}

const T = sql.ref('takes.id')
const M = sql.ref('m.id')

/**
 * One page of takes for GET /api/takes, and how many match.
 *
 * Takes rows are wide (the whole analysis is stored with them), so a page is
 * chosen as bare ids and only its rows are then read in full. A page walks
 * its sort column's index and checks each take's conditions until the page is
 * full, which for a broad query reads little more than the page; when a tag,
 * a device or the words match few takes (DRIVER_MAX), those ids drive instead
 * and only they are sorted. Relevance ranks every text match in the full-text
 * index. The count stops at `countUpTo` (COUNT_CAP unless asked, never before
 * the end of the page asked for), so it costs at most that many matches.
 */
export async function searchTakeRows(db: Db, q: TakeQuery, opts: { countUpTo?: number } = {}): Promise<SearchResult> {
  const fts = q.q?.trim() ? ftsQuery(q.q) : undefined
  if (fts === null) return { rows: [], total: 0, totalCapped: false }

  const sets = setConditions(q, fts)
  const text = fts ? sets[0] : null
  // The smallest id set drives when it is small; the others are checked per take.
  const sizes = await Promise.all(sets.map((c) => idsUpTo(db, c)))
  const least = Math.min(...sizes)
  if (least === 0) return { rows: [], total: 0, totalCapped: false }
  const driver = least <= DRIVER_MAX ? sets[sizes.indexOf(least)] : null
  const columns = columnConditions(q)
  /** Every condition but the one that yields the ids, for the take whose id is `id`. */
  const checks = (id: RawBuilder<unknown>, source: SetCondition | null) => [
    ...sets.filter((c) => c !== source).map((c) => c.holds(id)),
    notRemoved(id),
  ]
  // Ids come from the driver, else from the words, else from walking `takes` itself.
  const source = driver ?? text
  /** Matching take ids as `takes.id`, with the `takes` row at hand when a column condition needs it. */
  const matching = source
    ? columns.length
      ? sql`(${source.ids}) m CROSS JOIN takes ON takes.id = m.id ${whereAll([...checks(M, source), ...columns])}`
      : sql`(${source.ids}) m ${whereAll(checks(M, source))}`
    : sql`takes ${whereAll([...checks(T, null), ...columns])}`
  const idOf = source ? M : T

  // Relevance needs words to rank by; without them the list is newest first.
  const sort: TakeSort = q.sort === 'relevance' && !fts ? 'createdAt' : (q.sort ?? (fts ? 'relevance' : 'createdAt'))
  const order = sql.raw(q.order ?? (sort === 'createdAt' ? 'desc' : 'asc'))
  const offset = (q.page - 1) * q.pageSize
  const limit = sql`LIMIT ${q.pageSize} OFFSET ${offset}`

  let idQuery: RawBuilder<{ id: number }>
  if (sort === 'relevance') {
    // bm25 is smaller for better matches. The words yield the ids here (so every match is ranked once).
    const ranked = sql`(SELECT rowid AS id, bm25(take_fts) AS score FROM take_fts WHERE take_fts MATCH ${fts}) m`
    const others = checks(M, text)
    idQuery = columns.length
      ? sql`SELECT m.id FROM ${ranked} CROSS JOIN takes ON takes.id = m.id ${whereAll([...others, ...columns])}
            ORDER BY m.score ${order}, m.id ${order} ${limit}`
      : sql`SELECT m.id FROM ${ranked} ${whereAll(others)} ORDER BY m.score ${order}, m.id ${order} ${limit}`
  } else {
    const col = sql.ref(SORT_COLUMNS[sort])
    const join = sort === 'session' ? sql`JOIN capture_sessions ON capture_sessions.id = takes.session_id` : sql``
    // Unmeasured takes (null numbers) sort last either way.
    const nullsLast = NOT_NULL.has(sort) ? sql`` : sql`${col} IS NULL, `
    const conds = [...(driver ? [sql`takes.id IN (${driver.ids})`] : []), ...checks(T, driver), ...columns]
    idQuery = sql`SELECT takes.id AS id FROM takes ${join} ${whereAll(conds)}
                  ORDER BY ${nullsLast}${col} ${order}, takes.id ${order} ${limit}`
  }
  const countUpTo = Math.max(opts.countUpTo ?? COUNT_CAP, offset + q.pageSize)
  const countQuery = sql<{
    n: number
  }>`SELECT count(*) AS n FROM (SELECT ${idOf} FROM ${matching} LIMIT ${countUpTo + 1})`

  const page = (await idQuery.execute(db)).rows
  // A short first page is the whole list: nothing more to count.
  const n = offset === 0 && page.length < q.pageSize ? page.length : Number((await countQuery.execute(db)).rows[0].n)
  const total = Math.min(n, countUpTo)
  const totalCapped = n > countUpTo
  const ids = page.map((r) => r.id)
  if (!ids.length) return { rows: [], total, totalCapped }

  const rows = await selectTakes(db).where('takes.id', 'in', ids).execute()
  const byId = new Map(rows.map((r) => [r.id, r]))
  return { rows: ids.map((id) => byId.get(id)).filter((r): r is TakeJoined => !!r), total, totalCapped }
}
