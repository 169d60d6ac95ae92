import { sql, type RawBuilder } from 'kysely'
import { normalizeTag } from '@shared/schemas/library'
import { SUGGEST_FROM } from '@shared/schemas/character'
import type { TakeQuery, TakeSort } from '@shared/schemas/takes'
import type { Db } from '../core/database'
import { selectTakes, type TakeJoined } from './takes.repository'
import { searchWords } from './takes.words'
import { holdIds, type HeldIds } from '../core/id-sets'

/** Each sort: the column, and the index that lists takes in its order (none for the session's title, a joined table). */
const SORTS: Record<Exclude<TakeSort, 'relevance'>, { col: string; index?: string }> = {
  createdAt: { col: 'created_at', index: 'takes_created_at' },
  title: { col: 'title', index: 'takes_title' },
  filename: { col: 'filename', index: 'takes_filename' },
  session: { col: 'capture_sessions.title' },
  duration: { col: 'duration_seconds', index: 'takes_duration_seconds' },
  sampleRate: { col: 'sample_rate', index: 'takes_sample_rate' },
  channels: { col: 'channels', index: 'takes_channels' },
  integratedLufs: { col: 'integrated_lufs', index: 'takes_integrated_lufs' },
  truePeak: { col: 'true_peak_dbtp', index: 'takes_true_peak_dbtp' },
  loudnessRange: { col: 'loudness_range_lu', index: 'takes_loudness_range_lu' },
  samplePeak: { col: 'sample_peak_dbfs', index: 'takes_sample_peak_dbfs' },
  noiseFloor: { col: 'noise_floor_dbfs', index: 'takes_noise_floor_dbfs' },
  hum: { col: 'hum_hz', index: 'takes_hum_hz' },
  status: { col: 'status', index: 'takes_status' },
}

/**
 * The take's own columns that filters test. Every sort index above carries
 * them after its sort column and the id (migration walk_indexes), so a page
 * walking one checks them on the entry it is on, with no seek per take;
 * tests/api/library-search.test.ts checks the indexes hold them all.
 */
export const FILTERED_COLUMNS = [
  'status',
  'hum_hz',
  'sample_rate',
  'channels',
  'session_id',
  'uploader_id',
  'duration_seconds',
  'integrated_lufs',
  'true_peak_dbtp',
  'loudness_range_lu',
] as const
type Filtered = (typeof FILTERED_COLUMNS)[number]

/** The sort indexes a page walks (every sort but the session's). */
export const SORT_INDEXES = Object.values(SORTS).flatMap((s) => (s.index ? [s.index] : []))

/** Columns that are never NULL: they sort without the "unmeasured last" part. */
const NOT_NULL = new Set<TakeSort>(['createdAt', 'title', 'filename', 'session', 'status'])

/**
 * Counts stop here: past it a page says "10,000+" (`totalCapped`) instead of
 * counting on, so a broad query on a large library never counts every row.
 */
export const COUNT_CAP = 10_000

/**
 * A condition whose own index yields at most this many takes drives the
 * query: only those are checked (one seek each in takes_by_id) and sorted,
 * rather than walking the sort index past takes that fail.
 */
const DRIVER_MAX = 10_000

/**
 * The most takes a count reads. Where every condition matches many takes but
 * few match them all, counting exactly would read a large part of the
 * library; past this many the count is a floor and the page says "N+".
 */
const COUNT_BUDGET = 20_000

/**
 * Relevance ranks at most this many matches: the newest ones. Scoring a match
 * reads its word positions and column sizes, so ranking every one of 150,000
 * matches for a common word takes most of a second; past this many the page
 * already says "10,000+", and the newest matches are the ones most looked for.
 */
const RANK_CAP = COUNT_CAP

/**
 * How many text matches are read, newest first, to find where the ranked set
 * starts. Where the other conditions pass few of them, relevance ranks the
 * passing takes among these newest matches and the page says "N+".
 */
const RANK_BUDGET = 20_000

/** How far each condition's takes are counted to choose where the count reads from. */
const SIZE_PROBE = 10_000

/**
 * One filter of GET /api/takes (parameters bound, never spliced).
 * `ids`: the takes meeting it, read from its own index (a SELECT of `id`);
 * absent where no index serves it. `holds(id)`: the same test for one take;
 * tests on the take's own columns are instead `column(t)` on the narrow
 * index `takes_by_id` aliased `t`, so a take's row is never read to decide.
 */
interface Condition {
  ids?: RawBuilder<unknown>
  /** `ids` may hold takes that fail the condition, so reading them is not enough: check it too. */
  idsWider?: boolean
  holds?: (id: RawBuilder<unknown>) => RawBuilder<unknown>
  column?: (t: string) => RawBuilder<unknown>
  /** The sort index led by the tested column: it carries the other FILTERED_COLUMNS, so they can be tested on its entries. */
  index?: string
  /** One value of the column: its takes lie in `index` in id order, so those from an id on are one stretch of it. */
  equality?: boolean
}

const col = (t: string, name: string) => sql.ref(`${t}.${name}`)
const INDEX_OF = new Map(Object.values(SORTS).flatMap((s) => (s.index ? [[s.col, s.index] as const] : [])))
const filtered = (t: string, name: Filtered) => col(t, name)

/** A range filter on one measured column: one condition for min and max together. */
function range(name: Filtered, min: number | undefined, max: number | undefined): Condition[] {
  if (min === undefined && max === undefined) return []
  const test = (t: string) =>
    sql.join(
      [
        ...(min !== undefined ? [sql`${filtered(t, name)} >= ${min}`] : []),
        ...(max !== undefined ? [sql`${filtered(t, name)} <= ${max}`] : []),
      ],
      sql` AND `,
    )
  return [{ ids: sql`SELECT id FROM takes WHERE ${test('takes')}`, column: test, index: INDEX_OF.get(name) }]
}

/** An equality filter on an indexed column of takes. */
const equal = (name: Filtered, value: number | string): Condition => ({
  ids: sql`SELECT id FROM takes WHERE ${sql.ref(name)} = ${value}`,
  column: (t) => sql`${filtered(t, name)} = ${value}`,
  index: INDEX_OF.get(name),
  equality: true,
})

function conditions(q: TakeQuery, fts: string | undefined): Condition[] {
  const c: Condition[] = []
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
      ids: sql`SELECT DISTINCT ts.take_id AS id FROM sources s CROSS JOIN take_sources ts ON ts.source_id = s.id WHERE s.kind IN (${kinds})`,
      holds: (id) =>
        sql`EXISTS (SELECT 1 FROM take_sources ts JOIN sources s ON s.id = ts.source_id WHERE ts.take_id = ${id} AND s.kind IN (${kinds}))`,
    })
  }
  for (const tag of new Set((q.tag ?? []).map(normalizeTag)))
    c.push({
      ids: sql`SELECT take_id AS id FROM take_tags WHERE tag = ${tag}`,
      holds: (id) => sql`EXISTS (SELECT 1 FROM take_tags WHERE take_id = ${id} AND tag = ${tag})`,
    })
  // Character the analysis heard at suggestion strength, accepted as a tag or not (index take_character_tag).
  for (const tag of new Set(q.character ?? []))
    c.push({
      ids: sql`SELECT take_id AS id FROM take_character WHERE tag = ${tag} AND confidence >= ${SUGGEST_FROM}`,
      holds: (id) =>
        sql`EXISTS (SELECT 1 FROM take_character WHERE take_id = ${id} AND tag = ${tag} AND confidence >= ${SUGGEST_FROM})`,
    })
  // Listening notes' outcome ("takes with a keep note"), from the comments_outcome_take index.
  if (q.noteOutcome)
    c.push({
      ids: sql`SELECT DISTINCT take_id AS id FROM comments WHERE outcome = ${q.noteOutcome} AND parent_id IS NULL`,
      holds: (id) =>
        sql`EXISTS (SELECT 1 FROM comments WHERE take_id = ${id} AND outcome = ${q.noteOutcome} AND parent_id IS NULL)`,
    })
  if (q.sessionId) c.push(equal('session_id', q.sessionId))
  if (q.uploaderId) c.push(equal('uploader_id', q.uploaderId))
  if (q.sampleRate) c.push(equal('sample_rate', q.sampleRate))
  if (q.channels) c.push(equal('channels', q.channels))
  c.push(...range('duration_seconds', q.minDuration, q.maxDuration))
  c.push(...range('integrated_lufs', q.minLufs, q.maxLufs))
  c.push(...range('true_peak_dbtp', q.minTruePeak, q.maxTruePeak))
  c.push(...range('loudness_range_lu', q.minLra, q.maxLra))
  if (q.hum === '50' || q.hum === '60') c.push(equal('hum_hz', Number(q.hum)))
  if (q.hum === 'none')
    c.push({
      // The hum index alone (status would need each row): the unmeasured takes it adds are checked out.
      ids: sql`SELECT id FROM takes WHERE hum_hz IS NULL`,
      idsWider: true,
      column: (t) => sql`${filtered(t, 'hum_hz')} IS NULL AND ${filtered(t, 'status')} = 'ready'`,
      index: INDEX_OF.get('hum_hz'),
      equality: true,
    })
  if (q.status) c.push(equal('status', q.status))
  return c
}

/**
 * Every condition but `except`, for the take whose id is `id`; takes in the Removed list never match (see takes.removal.ts).
 * The take's own numbers are tested where `walked` says: on the entry of the sort index a query walks (each carries
 * the FILTERED_COLUMNS), in a set of the takes that meet them all (`ownHeld`, see ownFrom), or else by one seek each
 * into the narrow index takes_by_id.
 */
function checks(
  conds: Condition[],
  id: RawBuilder<unknown>,
  except?: Condition,
  walked?: string,
  ownHeld?: HeldIds,
): RawBuilder<unknown>[] {
  const rest = conds.filter((c) => c !== except || c.idsWider)
  const columns = rest.filter((c) => c.column).map((c) => c.column!(walked ?? 't'))
  const own = walked
    ? columns
    : ownHeld
      ? [ownHeld.has(id)]
      : [
          sql`EXISTS (SELECT 1 FROM takes t INDEXED BY takes_by_id WHERE t.id = ${id} AND ${sql.join(columns, sql` AND `)})`,
        ]
  // The take's own numbers first (in place, or one seek in the narrow index): most takes stop there.
  return [...(columns.length ? own : []), ...held(rest, id)]
}

/** The conditions a take's own columns cannot decide (links, tags, words), and not being in the Removed list. */
const held = (conds: Condition[], id: RawBuilder<unknown>) => [
  ...conds.filter((c) => c.holds).map((c) => c.holds!(id)),
  sql`${id} NOT IN (SELECT take_id FROM take_removals)`,
]

const whereAll = (conds: RawBuilder<unknown>[]) => (conds.length ? sql`WHERE ${sql.join(conds, sql` AND `)}` : sql``)

/**
 * The largest condition that should drive a page ending at `end`. Driving
 * checks all of its n takes; walking checks about end × library ÷ n of them
 * (fewer when n is a large share), so driving wins below n² ≈ end × library.
 * The library's size is taken from the highest take id (a seek, not a count).
 */
async function driverMax(db: Db, end: number): Promise<number> {
  const r = await sql<{ n: number | null }>`SELECT max(id) AS n FROM takes`.execute(db)
  return Math.min(DRIVER_MAX, Math.sqrt(4 * end * Number(r.rows[0].n ?? 0)))
}

/** How many takes a condition's index yields, counting no further than `upTo` + 1. */
async function sizeOf(db: Db, c: Condition, upTo: number): Promise<number> {
  const r = await sql<{ n: number }>`SELECT count(*) AS n FROM (${c.ids} LIMIT ${upTo + 1})`.execute(db)
  return Number(r.rows[0].n)
}

/**
 * Where relevance starts ranking: the lowest take id of the `cap` newest takes
 * that meet every condition, when more than `cap` do. Reads the text matches
 * newest first (FTS5 walks its id order), at most `most` of them; when those
 * run out before `cap` takes pass, the ranked set is the passing takes among
 * them and `found` says how many (older matches may exist). No floor when
 * every text match was read: all are ranked, and `all` is how many pass (the exact count).
 */
async function rankFloor(
  db: Db,
  conds: Condition[],
  text: Condition,
  fts: string,
  cap: number,
  most = RANK_BUDGET,
  own?: HeldIds,
) {
  const budget = Math.max(most, cap)
  const newest = sql`SELECT rowid AS id FROM take_fts WHERE take_fts MATCH ${fts} ORDER BY rowid DESC LIMIT ${budget}`
  const r = await sql<{ n: number; low: number | null }>`SELECT count(*) AS n, min(m.id) AS low FROM (
      SELECT m.id FROM (${newest}) m ${whereAll(checks(conds, M, text, undefined, own))} LIMIT ${cap}) m`.execute(db)
  const found = Number(r.rows[0].n)
  if (found >= cap) return { floor: Number(r.rows[0].low) }
  const e = await sql<{
    seen: number
    edge: number | null
  }>`SELECT count(*) AS seen, min(id) AS edge FROM (${newest})`.execute(db)
  if (Number(e.rows[0].seen) < budget) return { floor: null, all: found }
  return { floor: Number(e.rows[0].edge), found }
}

/**
 * The takes from id `floor` on that meet every condition on their own
 * columns, held in memory; none where no equality is among those conditions.
 * They are read in place from the equality's sort index, which lists one
 * value's takes in id order: ranking the newest text matches then tests each
 * with a bit read, where a seek each into takes_by_id costs about 1 µs.
 */
async function ownFrom(db: Db, conds: Condition[], floor: number): Promise<HeldIds | undefined> {
  const lead = conds.find((c) => c.equality && c.index)
  if (!lead) return undefined
  const columns = conds.filter((c) => c.column).map((c) => c.column!('takes'))
  return holdIds(
    db,
    sql`SELECT takes.id AS id FROM takes INDEXED BY ${sql.raw(lead.index!)}
      WHERE ${sql.join([...columns, sql`takes.id >= ${floor}`], sql` AND `)}`,
  )
}

/** The lowest id of the newest `most` text matches (null when there are no more than that: every match). */
async function rankWindow(db: Db, fts: string, cap: number, most = RANK_BUDGET) {
  const budget = Math.max(most, cap)
  const e = await sql<{ seen: number; edge: number | null }>`SELECT count(*) AS seen, min(id) AS edge FROM (
      SELECT rowid AS id FROM take_fts WHERE take_fts MATCH ${fts} ORDER BY rowid DESC LIMIT ${budget})`.execute(db)
  return { floor: Number(e.rows[0].seen) < budget ? null : Number(e.rows[0].edge) }
}

export interface SearchResult {
  rows: TakeJoined[]
  /** Matches: exact unless `totalCapped`, then a floor (at least this many). */
  total: number
  /** Counting stopped (at the count limit, or at COUNT_BUDGET takes read): `total` or more match. */
  totalCapped: boolean
}

export interface SearchOptions {
  /** Count matches up to this many (default COUNT_CAP); the export asks for its own limit. */
  countUpTo?: number
  /** Most takes a count reads (default COUNT_BUDGET); never fewer than `countUpTo` + 1. */
  countBudget?: number
  /** Most text matches relevance ranks, newest first (default RANK_CAP). */
  rankCap?: number
  /** Most text matches read to find them (default RANK_BUDGET). */
  rankBudget?: number
  /** Largest id set that drives the query (default DRIVER_MAX); tests set it to 0 or Infinity to check both ways of finding a page. */
  driverMax?: number
  /** How far each condition is sized (default SIZE_PROBE); tests set it low to take a large library's paths on a small one. */
  sizeProbe?: number
}

const ID = sql.ref('takes.id')
const M = sql.ref('m.id')

/**
 * One page of takes for GET /api/takes, and how many match.
 *
 * Takes rows are wide (the whole analysis is stored with them), so a page is
 * chosen as bare ids and only its rows are then read in full; deciding reads
 * only indexes. Each condition is sized on its own index, counting no further
 * than SIZE_PROBE. When one yields few takes (DRIVER_MAX), those drive: only
 * they are checked and sorted. Otherwise the page walks its sort column's index
 * and checks take after take until the page is full, which for broad
 * conditions reads little more than the page. Relevance ranks every text match
 * in the full-text index. The count reads the smallest condition's takes and
 * stops at `countUpTo` matches (COUNT_CAP unless asked, never before the end
 * of the page asked for).
 */
export async function searchTakeRows(db: Db, q: TakeQuery, opts: SearchOptions = {}): Promise<SearchResult> {
  const fts = q.q?.trim() ? await searchWords(db, q.q) : undefined
  if (fts === null) return { rows: [], total: 0, totalCapped: false }

  const conds = conditions(q, fts)
  const text = fts ? conds[0] : undefined
  const sized = conds.filter((c) => c.ids)
  const probe = opts.sizeProbe ?? SIZE_PROBE
  const sizes = await Promise.all(sized.map((c) => sizeOf(db, c, probe)))
  const least = Math.min(...sizes)
  if (least === 0) return { rows: [], total: 0, totalCapped: false }
  const smallest = sized.length ? sized[sizes.indexOf(least)] : undefined
  const offset = (q.page - 1) * q.pageSize
  const driver = least <= (opts.driverMax ?? (await driverMax(db, offset + q.pageSize))) ? smallest : undefined
  // Relevance needs words to rank by; without them the list is newest first.
  const sort: TakeSort = q.sort === 'relevance' && !fts ? 'createdAt' : (q.sort ?? (fts ? 'relevance' : 'createdAt'))
  const desc = (q.order ?? (sort === 'createdAt' ? 'desc' : 'asc')) === 'desc'
  const order = sql.raw(desc ? 'desc' : 'asc')
  // A driver's ids are read once (the words may be costly to match) and handed back as a list; a ranked page reads the words anyway.
  const driverIds =
    driver && sort !== 'relevance'
      ? sql`SELECT value AS id FROM json_each(${JSON.stringify((await sql<{ id: number }>`${driver.ids}`.execute(db)).rows.map((r) => r.id))})`
      : undefined
  const pageOf = (query: RawBuilder<{ id: number }>) => query.execute(db).then((r) => r.rows.map((x) => x.id))
  // Words matching many takes, tested take by take (a walk, a driver's takes, a count), are read into memory once
  // (server/core/id-sets.ts): each test is then a bit read, and a count may read another condition's index in place.
  const words =
    text && sort !== 'relevance' && driver !== text && sizes[sized.indexOf(text)] > probe
      ? await holdIds(db, text.ids!)
      : undefined
  if (words) text!.holds = words.has
  let own: HeldIds | undefined
  try {
    let ids: number[]
    let ranked: { floor: number | null; found?: number; all?: number } | undefined
    if (sort === 'relevance') {
      const cap = Math.max(opts.rankCap ?? RANK_CAP, offset + q.pageSize)
      // bm25 is smaller for better matches. The other conditions are tested first, so only takes that pass are scored.
      const tid = sql.ref('take_fts.rowid')
      const rankedPage = async (floor: number | null) => {
        const from = floor === null ? [] : [sql`${tid} >= ${floor}`]
        // bm25 is scored inside (FTS5 allows it only there); the window counts every passing match before the page is cut.
        const r = await sql<{ id: number; n: number }>`SELECT id, count(*) OVER () AS n FROM (
          SELECT take_fts.rowid AS id, bm25(take_fts) AS score FROM take_fts
          ${whereAll([sql`take_fts MATCH ${fts}`, ...from, ...checks(conds, tid, text, undefined, own)])})
        ORDER BY score ${order}, id ${order} LIMIT ${q.pageSize} OFFSET ${offset}`.execute(db)
        return { ids: r.rows.map((x) => x.id), passing: r.rows.length ? Number(r.rows[0].n) : undefined }
      }
      // Where few matches may pass (other conditions, or few text matches at all) rank the newest RANK_BUDGET
      // matches straight away, counting those that pass as they are scored; only when more than `cap` pass is the
      // floor raised to the newest `cap` of them (rankFloor) and the page ranked again. Common words alone pass
      // nearly every match, so there the floor is found first.
      const fewMatches = sizes[sized.indexOf(text!)] <= probe
      const quick = conds.length > 1 || fewMatches ? await rankWindow(db, fts!, cap, opts.rankBudget) : undefined
      own = quick?.floor != null ? await ownFrom(db, conds, quick.floor) : undefined
      const first = quick ? await rankedPage(quick.floor) : undefined
      if (quick && first?.passing !== undefined && first.passing < cap) {
        ids = first.ids
        ranked =
          quick.floor === null ? { floor: null, all: first.passing } : { floor: quick.floor, found: first.passing }
      } else {
        ranked = await rankFloor(db, conds, text!, fts!, cap, opts.rankBudget, own)
        ids = (await rankedPage(ranked.floor)).ids
      }
    } else if (driverIds) {
      // Few takes: check them all, then sort them.
      const by = sort === 'session' ? sql.ref('capture_sessions.title') : col('takes', SORTS[sort].col)
      const nullsLast = NOT_NULL.has(sort) ? sql`` : sql`${by} IS NULL, `
      ids = await pageOf(sql`SELECT takes.id AS id
      FROM (${driverIds}) m CROSS JOIN takes INDEXED BY takes_by_id ON takes.id = m.id
      JOIN capture_sessions ON capture_sessions.id = takes.session_id
      ${whereAll(checks(conds, ID, driver))}
      ORDER BY ${nullsLast}${by} ${order}, takes.id ${order} LIMIT ${q.pageSize} OFFSET ${offset}`)
    } else if (sort === 'session') {
      ids = await walkSessions(db, desc, checks(conds, ID), q.pageSize, offset)
    } else {
      ids = await walkSortIndex(
        db,
        SORTS[sort],
        !NOT_NULL.has(sort),
        order,
        checks(conds, ID, undefined, 'takes'),
        q.pageSize,
        offset,
      )
    }

    // The count reads the driver's or the smallest condition's takes, at most COUNT_BUDGET of them, and checks the rest.
    // Exact when that list ends within the budget; past it, what was found is a floor ("N+").
    const countUpTo = Math.max(opts.countUpTo ?? COUNT_CAP, offset + q.pageSize)
    let total = ids.length
    let totalCapped = false
    // A ranked window is what the pages list, so it is the count: at least that many match.
    if (ranked?.found !== undefined) {
      total = ranked.found
      totalCapped = true
    } else if (ranked?.all !== undefined) {
      // Every text match was read while finding the ranked set: the passing ones are already counted.
      total = Math.min(ranked.all, countUpTo)
      totalCapped = ranked.all > countUpTo
    } else if (!(offset === 0 && ids.length < q.pageSize)) {
      const budget = Math.max(opts.countBudget ?? COUNT_BUDGET, countUpTo + 1)
      // Where every condition yields many takes, the count reads a condition on a take's own column in place.
      // Not where words are tested from their index (their list of matches would be built again), only when they
      // are held in memory.
      const inPlace = !driverIds && (!text || words) && least > probe ? sized.find((c) => c.index) : undefined
      const { seen, n } = inPlace
        ? await countInPlace(db, conds, inPlace, budget)
        : await countFrom(
            db,
            conds,
            driverIds ?? smallest?.ids ?? sql`SELECT id FROM takes`,
            driver ?? smallest,
            budget,
          )
      total = Math.min(n, countUpTo)
      totalCapped = n > countUpTo || seen > budget
      if (totalCapped) total = Math.max(total, offset + ids.length)
    }
    if (!ids.length) return { rows: [], total, totalCapped }

    const rows = await selectTakes(db).where('takes.id', 'in', ids).execute()
    const byId = new Map(rows.map((r) => [r.id, r]))
    return { rows: ids.map((id) => byId.get(id)).filter((r): r is TakeJoined => !!r), total, totalCapped }
  } finally {
    words?.release()
    own?.release()
  }
}

/**
 * How many of the first `budget` takes `source` yields meet every condition
 * but `read` (the condition `source` lists; none for every take): one seek per
 * take into the narrow index for its own numbers, then the rest.
 * `seen` past `budget` means the list went on.
 */
async function countFrom(
  db: Db,
  conds: Condition[],
  source: RawBuilder<unknown>,
  listed: Condition | undefined,
  budget: number,
) {
  const r = await sql<{ seen: number; n: number }>`SELECT count(*) AS seen,
      coalesce(sum(${sql.join(checks(conds, M, listed), sql` AND `)}), 0) AS n
    FROM (SELECT id FROM (${source}) LIMIT ${budget + 1}) m`.execute(db)
  return { seen: Number(r.rows[0].seen), n: Number(r.rows[0].n) }
}

/**
 * The same, reading the takes that meet `source` (a condition on a take's own
 * column) from that column's sort index: it carries the other filtered
 * columns, so they are tested on the entry read, with no seek per take.
 */
async function countInPlace(db: Db, conds: Condition[], source: Condition, budget: number) {
  const columns = conds.filter((c) => c !== source && c.column).map((c) => c.column!('takes'))
  const r = await sql<{ seen: number; n: number }>`SELECT count(*) AS seen,
      coalesce(sum(CASE WHEN m.own THEN ${sql.join(held(conds, M), sql` AND `)} ELSE 0 END), 0) AS n
    FROM (SELECT takes.id AS id, ${sql.join([sql`1`, ...columns], sql` AND `)} AS own
      FROM takes INDEXED BY ${sql.raw(source.index!)} WHERE ${source.column!('takes')} LIMIT ${budget + 1}) m`.execute(
    db,
  )
  return { seen: Number(r.rows[0].seen), n: Number(r.rows[0].n) }
}

/**
 * A page in a column's order, walking that column's index and checking take
 * after take. Unmeasured takes (NULL) come last in either direction; an index
 * holds them first, so they are a second walk (in id order) after the measured ones.
 */
async function walkSortIndex(
  db: Db,
  sort: { col: string; index?: string },
  nullable: boolean,
  order: RawBuilder<unknown>,
  where: RawBuilder<unknown>[],
  size: number,
  offset: number,
): Promise<number[]> {
  const by = col('takes', sort.col)
  const from = sql`takes INDEXED BY ${sql.raw(sort.index!)}`
  const walk = async (part: RawBuilder<unknown>[], orderBy: RawBuilder<unknown>, limit: number, skip: number) =>
    (
      await sql<{ id: number }>`SELECT takes.id AS id FROM ${from} ${whereAll([...part, ...where])}
        ORDER BY ${orderBy} LIMIT ${limit} OFFSET ${skip}`.execute(db)
    ).rows.map((r) => r.id)
  if (!nullable) return walk([], sql`${by} ${order}, takes.id ${order}`, size, offset)

  const measured = await walk([sql`${by} IS NOT NULL`], sql`${by} ${order}, takes.id ${order}`, size, offset)
  if (measured.length === size) return measured
  // How many measured takes match decides where the unmeasured part of the page starts.
  const measuredCount = measured.length
    ? offset + measured.length
    : Number(
        (
          await sql<{
            n: number
          }>`SELECT count(*) AS n FROM (SELECT 1 FROM ${from} ${whereAll([sql`${by} IS NOT NULL`, ...where])} LIMIT ${offset})`.execute(
            db,
          )
        ).rows[0].n,
      )
  const rest = await walk(
    [sql`${by} IS NULL`],
    sql`takes.id ${order}`,
    size - measured.length,
    Math.max(0, offset - measuredCount),
  )
  return [...measured, ...rest]
}

/**
 * A page in capture-session order (by title, then take id), walking the
 * sessions in title order and each one's takes through `takes_session`: no
 * index of takes holds a joined table's order, and a team's sessions are few
 * next to its takes. Sessions that share a title are walked as one, so their
 * takes still interleave by id.
 */
async function walkSessions(
  db: Db,
  desc: boolean,
  where: RawBuilder<unknown>[],
  size: number,
  offset: number,
): Promise<number[]> {
  const byTitle = new Map<string, number[]>()
  for (const s of await db.selectFrom('capture_sessions').select(['id', 'title']).execute())
    byTitle.set(s.title, [...(byTitle.get(s.title) ?? []), s.id])
  // SQLite orders text by its UTF-8 bytes.
  const titles = [...byTitle.keys()].sort((a, b) => Buffer.compare(Buffer.from(a), Buffer.from(b)))
  if (desc) titles.reverse()
  const order = sql.raw(desc ? 'desc' : 'asc')
  const out: number[] = []
  let skip = offset
  for (const title of titles) {
    const inGroup = [sql`takes.session_id IN (${sql.join(byTitle.get(title)!)})`, ...where]
    const found = (
      await sql<{ id: number }>`SELECT takes.id AS id FROM takes INDEXED BY takes_session ${whereAll(inGroup)}
        ORDER BY takes.id ${order} LIMIT ${size - out.length} OFFSET ${skip}`.execute(db)
    ).rows.map((r) => r.id)
    if (found.length) skip = 0
    else if (skip > 0) {
      // The whole group lies before the page: skip past it.
      const r = await sql<{ n: number }>`SELECT count(*) AS n FROM (SELECT 1 FROM takes INDEXED BY takes_session
        ${whereAll(inGroup)} LIMIT ${skip})`.execute(db)
      skip -= Number(r.rows[0].n)
    }
    out.push(...found)
    if (out.length === size) break
  }
  return out
}
