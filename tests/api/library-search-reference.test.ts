// Every library search the benchmark times (bench/library-queries.ts), on the
// benchmark's own seeded library at 3,000 takes, against a naive reference:
// every take read whole, filtered and sorted in plain TypeScript the way
// GET /api/takes documents it (conditions ANDed, unmeasured takes last, ties
// by id in the same direction, removed takes left out, text ranked by the
// full-text index's bm25). The search runs three ways, so that each way of
// finding a page is held to the same answer: its own choice, every condition
// forced to walk the sort index, and any condition forced to drive.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { sql } from 'kysely'
import { TakeQuery, type TakeSort } from '@shared/schemas/takes'
import { normalizeTag } from '@shared/schemas/library'
import { searchTakeRows, type SearchOptions } from '../../server/takes/takes.search'
import { ftsQuery, searchWords } from '../../server/takes/takes.words'
import { seedLibrary } from '../../bench/library-seed'
import { QUERIES, knownIds, type Known } from '../../bench/library-queries'
import { startTestServer, type TestServer } from '../helpers/server'

const TAKES = 3000

interface Row {
  id: number
  status: string
  hum_hz: number | null
  sample_rate: number | null
  channels: number | null
  session_id: number
  uploader_id: number | null
  duration_seconds: number | null
  integrated_lufs: number | null
  true_peak_dbtp: number | null
  loudness_range_lu: number | null
  sample_peak_dbfs: number | null
  noise_floor_dbfs: number | null
  created_at: string
  title: string
  filename: string
}

let server: TestServer
let known: Known
let rows: Row[]
const tags = new Map<number, Set<string>>()
const links = new Map<number, { sourceId: number; kind: string }[]>()
const sessionTitle = new Map<number, string>()
const removed = new Set<number>()

beforeAll(async () => {
  server = await startTestServer()
  const db = server.ctx.db
  await seedLibrary(db, TAKES)
  known = await knownIds(db)
  // A few removed takes, which no search may list.
  const some = await db.selectFrom('takes').select('id').orderBy('id', 'desc').limit(40).execute()
  await db
    .insertInto('take_removals')
    .values(some.filter((_, i) => i % 3 === 0).map((r) => ({ take_id: r.id })))
    .execute()

  rows = (
    await sql<Row>`SELECT id, status, hum_hz, sample_rate, channels, session_id, uploader_id, duration_seconds,
    integrated_lufs, true_peak_dbtp, loudness_range_lu, sample_peak_dbfs, noise_floor_dbfs, created_at, title, filename
    FROM takes`.execute(db)
  ).rows
  for (const t of await db.selectFrom('take_tags').selectAll().execute())
    tags.set(t.take_id, (tags.get(t.take_id) ?? new Set()).add(t.tag))
  for (const l of await db
    .selectFrom('take_sources')
    .innerJoin('sources', 'sources.id', 'take_sources.source_id')
    .select(['take_id', 'source_id', 'kind'])
    .execute())
    links.set(l.take_id, [...(links.get(l.take_id) ?? []), { sourceId: l.source_id, kind: l.kind }])
  for (const s of await db.selectFrom('capture_sessions').select(['id', 'title']).execute())
    sessionTitle.set(s.id, s.title)
  for (const r of await db.selectFrom('take_removals').select('take_id').execute()) removed.add(r.take_id)
}, 120_000)
afterAll(async () => {
  await server.stop()
})

const SORT_VALUE: Record<Exclude<TakeSort, 'relevance'>, (r: Row) => string | number | null> = {
  createdAt: (r) => r.created_at,
  title: (r) => r.title,
  filename: (r) => r.filename,
  session: (r) => sessionTitle.get(r.session_id)!,
  duration: (r) => r.duration_seconds,
  sampleRate: (r) => r.sample_rate,
  channels: (r) => r.channels,
  integratedLufs: (r) => r.integrated_lufs,
  truePeak: (r) => r.true_peak_dbtp,
  loudnessRange: (r) => r.loudness_range_lu,
  samplePeak: (r) => r.sample_peak_dbfs,
  noiseFloor: (r) => r.noise_floor_dbfs,
  hum: (r) => r.hum_hz,
  status: (r) => r.status,
}

/** The whole ordered list of matching ids, worked out the slow, obvious way. */
async function reference(q: TakeQuery): Promise<number[]> {
  const within = (v: number | null, min?: number, max?: number) =>
    (min === undefined || (v !== null && v >= min)) && (max === undefined || (v !== null && v <= max))
  // Ranked by bm25 of the words as the search spells them out (the matches are those of the prefix form: see the test below).
  const words = q.q?.trim() ? await searchWords(server.ctx.db, q.q) : undefined
  const score = new Map<number, number>()
  if (words)
    for (const r of (
      await sql<{
        id: number
        score: number
      }>`SELECT rowid AS id, bm25(take_fts) AS score FROM take_fts WHERE take_fts MATCH ${words}`.execute(server.ctx.db)
    ).rows)
      score.set(r.id, r.score)
  const found = rows.filter((r) => {
    const mine = links.get(r.id) ?? []
    const myTags = tags.get(r.id) ?? new Set()
    return (
      !removed.has(r.id) &&
      (!words || score.has(r.id)) &&
      (q.sourceId ?? []).every((s) => mine.some((l) => l.sourceId === s)) &&
      (!q.sourceKind?.length || mine.some((l) => q.sourceKind!.includes(l.kind as never))) &&
      (q.tag ?? []).every((t) => myTags.has(normalizeTag(t))) &&
      (!q.sessionId || r.session_id === q.sessionId) &&
      (!q.uploaderId || r.uploader_id === q.uploaderId) &&
      (!q.sampleRate || r.sample_rate === q.sampleRate) &&
      (!q.channels || r.channels === q.channels) &&
      within(r.duration_seconds, q.minDuration, q.maxDuration) &&
      within(r.integrated_lufs, q.minLufs, q.maxLufs) &&
      within(r.true_peak_dbtp, q.minTruePeak, q.maxTruePeak) &&
      within(r.loudness_range_lu, q.minLra, q.maxLra) &&
      (q.hum === undefined ||
        (q.hum === 'none' ? r.hum_hz === null && r.status === 'ready' : r.hum_hz === Number(q.hum))) &&
      (!q.status || r.status === q.status)
    )
  })
  const sort = q.sort === 'relevance' && !words ? 'createdAt' : (q.sort ?? (words ? 'relevance' : 'createdAt'))
  const dir = (q.order ?? (sort === 'createdAt' ? 'desc' : 'asc')) === 'asc' ? 1 : -1
  const value = sort === 'relevance' ? (r: Row) => score.get(r.id)! : SORT_VALUE[sort]
  return found
    .sort((a, b) => {
      const va = value(a)
      const vb = value(b)
      if (va === null || vb === null) return va === vb ? dir * (a.id - b.id) : va === null ? 1 : -1
      if (va !== vb) return va < vb ? -dir : dir
      return dir * (a.id - b.id)
    })
    .map((r) => r.id)
}

describe('typed words spelled out as whole terms', () => {
  const matches = async (fts: string | null) =>
    fts === null
      ? []
      : (
          await sql<{
            id: number
          }>`SELECT rowid AS id FROM take_fts WHERE take_fts MATCH ${fts} ORDER BY rowid`.execute(server.ctx.db)
        ).rows.map((r) => r.id)

  it('match exactly the takes the prefix form matches', async () => {
    // Single letters and digits stand for many terms (past the limit they stay prefixes); the rest for one or a few.
    const typed = [
      'hum',
      'whin',
      'power supply 60',
      'drone',
      'p',
      'a',
      '6',
      '60',
      'Po',
      'WHINE',
      'sup 6',
      'zzzz',
      'Störung',
      'brumm 5',
    ]
    let some = 0
    for (const q of typed) {
      const prefix = await matches(ftsQuery(q))
      expect(await matches(await searchWords(server.ctx.db, q)), q).toEqual(prefix)
      if (prefix.length) some++
    }
    expect(some, 'most of these words should match something in the seeded library').toBeGreaterThan(8)
  })

  it('spell a word out as the terms that begin with it, and say when nothing can match', async () => {
    expect(await searchWords(server.ctx.db, 'WHIN')).toBe('"whine"')
    expect(await searchWords(server.ctx.db, 'zzzzq')).toBeNull()
    expect(await searchWords(server.ctx.db, '"*')).toBeNull()
    // Accented words keep the prefix form: the index folds them itself.
    expect(await searchWords(server.ctx.db, 'Störung')).toBe('"Störung"*')
    // One letter begins too many terms to list: it stays a prefix, beside a spelled-out word.
    expect(await searchWords(server.ctx.db, 'p whin')).toBe('"p"* AND "whine"')
  })
})

const WAYS: [string, SearchOptions][] = [
  ['as the search chooses', {}],
  ['walking the sort index', { driverMax: 0 }],
  ['driven by the smallest condition', { driverMax: Number.POSITIVE_INFINITY }],
  // Sizing no further than 20 takes, every condition looks large, as on a million takes: common words are held in
  // memory (server/core/id-sets.ts) and a count reads a column's sort index in place.
  ['as on a large library', { sizeProbe: 20 }],
  ['as on a large library, walking', { sizeProbe: 20, driverMax: 0 }],
]

describe('each benchmark search equals a plain reading of a 3,000-take library', () => {
  const searches = QUERIES.filter((b) => b.takesQuery)
  it('covers every search row of the benchmark', () => {
    expect(searches.length).toBeGreaterThanOrEqual(17)
  })

  for (const bench of searches) {
    it(bench.name, async () => {
      const qs = bench.takesQuery!(known)
      const base = TakeQuery.parse(Object.fromEntries(new URLSearchParams(qs)))
      const want = await reference(base)
      expect(want.length, 'the seeded library should hold matches for every benchmark search').toBeGreaterThan(0)
      for (const [way, opts] of WAYS) {
        for (const [page, pageSize] of [
          [1, 50],
          [3, 50],
          [2, 7],
          [Math.ceil(want.length / 50), 50],
        ]) {
          const at = `${way}, page ${page} of ${pageSize}`
          const got = await searchTakeRows(server.ctx.db, { ...base, page, pageSize }, opts)
          expect(
            got.rows.map((r) => r.id),
            at,
          ).toEqual(want.slice((page - 1) * pageSize, page * pageSize))
          expect({ total: got.total, totalCapped: got.totalCapped }, at).toEqual({
            total: want.length,
            totalCapped: false,
          })
        }
        // A count that stops early: exact below the limit, "more than" the limit above it.
        const limit = 100
        const capped = await searchTakeRows(
          server.ctx.db,
          { ...base, page: 1, pageSize: 10 },
          { ...opts, countUpTo: limit },
        )
        expect({ total: capped.total, totalCapped: capped.totalCapped }, `${way}, counting to ${limit}`).toEqual(
          want.length > limit ? { total: limit, totalCapped: true } : { total: want.length, totalCapped: false },
        )
        // A count that may read only a few takes: exact when it could, else a floor that the true count meets.
        const floor = await searchTakeRows(
          server.ctx.db,
          { ...base, page: 1, pageSize: 10 },
          { ...opts, countUpTo: 20, countBudget: 60 },
        )
        if (floor.totalCapped) expect(want.length, `${way}, a floor`).toBeGreaterThanOrEqual(floor.total)
        else expect(floor.total, `${way}, read to the end`).toBe(want.length)
        expect(floor.rows.map((r) => r.id)).toEqual(want.slice(0, 10))
      }
    })
  }

  it('ranks only the newest matches when asked to rank few, and says how many it ranked when the read runs out', async () => {
    // rankCap 30 and rankBudget 200 stand in for 10,000 and 20,000 on a million takes.
    const [cap, budget] = [30, 200]
    const ranked = searches.filter((b) => new URLSearchParams(b.takesQuery!(known)).has('q'))
    let windows = 0
    for (const bench of ranked) {
      const base = TakeQuery.parse(Object.fromEntries(new URLSearchParams(bench.takesQuery!(known))))
      if (base.sort && base.sort !== 'relevance') continue
      const full = await reference(base)
      const inFull = new Set(full)
      const textIds = (
        await sql<{
          id: number
        }>`SELECT rowid AS id FROM take_fts WHERE take_fts MATCH ${ftsQuery(base.q!)} ORDER BY rowid DESC`.execute(
          server.ctx.db,
        )
      ).rows.map((r) => r.id)
      const passing = textIds.slice(0, budget).filter((id) => inFull.has(id))
      let keep: Set<number> = inFull
      let count: { total: number; totalCapped: boolean } | undefined
      if (passing.length >= cap) keep = new Set(passing.slice(0, cap))
      else if (textIds.length > budget) {
        keep = new Set(passing)
        count = { total: passing.length, totalCapped: true }
      }
      if (keep !== inFull) windows++
      const want = full.filter((id) => keep.has(id))
      for (const page of [1, 2]) {
        const got = await searchTakeRows(
          server.ctx.db,
          { ...base, page, pageSize: 10 },
          { rankCap: cap, rankBudget: budget },
        )
        expect(
          got.rows.map((r) => r.id),
          `${bench.name}, page ${page}`,
        ).toEqual(want.slice((page - 1) * 10, page * 10))
        if (count) expect({ total: got.total, totalCapped: got.totalCapped }).toEqual(count)
      }
    }
    expect(windows, 'some benchmark text search should rank a window').toBeGreaterThan(0)
  })

  it('pages past the end of a list with unmeasured takes in it, and past its measured part', async () => {
    // Sorting by loudness puts the unmeasured (queued, failed) takes last: pages that straddle and pass that seam.
    const base = TakeQuery.parse({ sort: 'integratedLufs', order: 'desc', minDuration: '0' })
    const want = await reference(base)
    const measured = want.filter((id) => rows.find((r) => r.id === id)!.integrated_lufs !== null).length
    expect(measured).toBeLessThan(want.length)
    for (const [way, opts] of WAYS)
      for (const page of [Math.floor(measured / 20), Math.floor(measured / 20) + 1, Math.ceil(want.length / 20)]) {
        const got = await searchTakeRows(server.ctx.db, { ...base, page, pageSize: 20 }, opts)
        expect(
          got.rows.map((r) => r.id),
          `${way}, page ${page}`,
        ).toEqual(want.slice((page - 1) * 20, page * 20))
      }
  })
})
