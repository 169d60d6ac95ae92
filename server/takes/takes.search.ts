import { sql } from 'kysely'
import type { TakeQuery, TakeSort } from '@shared/schemas/takes'
import type { Db } from '../core/database'
import { selectTakes } from './takes.repository'

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

/** One page of takes for GET /api/takes, and the total that matches. */
export async function searchTakeRows(db: Db, q: TakeQuery) {
  const fts = q.q?.trim() ? ftsQuery(q.q) : undefined
  if (fts === null) return { rows: [], total: 0 }

  let base = selectTakes(db)
  if (fts) base = base.where((eb) => eb('takes.id', 'in', sql<number>`(SELECT rowid FROM take_fts WHERE take_fts MATCH ${fts})`))
  for (const id of q.sourceId ?? [])
    base = base.where((eb) => eb.exists(eb.selectFrom('take_sources').select('take_id').whereRef('take_sources.take_id', '=', 'takes.id').where('source_id', '=', id)))
  if (q.sourceKind?.length) {
    const kinds = q.sourceKind
    base = base.where((eb) =>
      eb.exists(
        eb
          .selectFrom('take_sources')
          .innerJoin('sources', 'sources.id', 'take_sources.source_id')
          .select('take_sources.take_id')
          .whereRef('take_sources.take_id', '=', 'takes.id')
          .where('sources.kind', 'in', kinds),
      ),
    )
  }
  for (const tag of q.tag ?? [])
    base = base.where((eb) => eb.exists(eb.selectFrom('take_tags').select('take_id').whereRef('take_tags.take_id', '=', 'takes.id').where('tag', '=', tag.trim().toLowerCase())))
  if (q.sessionId) base = base.where((eb) => eb('takes.session_id', '=', q.sessionId!))
  if (q.uploaderId) base = base.where((eb) => eb('takes.uploader_id', '=', q.uploaderId!))
  if (q.sampleRate) base = base.where((eb) => eb('takes.sample_rate', '=', q.sampleRate!))
  if (q.channels) base = base.where((eb) => eb('takes.channels', '=', q.channels!))
  if (q.minDuration !== undefined) base = base.where((eb) => eb('takes.duration_seconds', '>=', q.minDuration!))
  if (q.maxDuration !== undefined) base = base.where((eb) => eb('takes.duration_seconds', '<=', q.maxDuration!))
  if (q.minLufs !== undefined) base = base.where((eb) => eb('takes.integrated_lufs', '>=', q.minLufs!))
  if (q.maxLufs !== undefined) base = base.where((eb) => eb('takes.integrated_lufs', '<=', q.maxLufs!))
  if (q.minTruePeak !== undefined) base = base.where((eb) => eb('takes.true_peak_dbtp', '>=', q.minTruePeak!))
  if (q.maxTruePeak !== undefined) base = base.where((eb) => eb('takes.true_peak_dbtp', '<=', q.maxTruePeak!))
  if (q.hum === '50' || q.hum === '60') base = base.where((eb) => eb('takes.hum_hz', '=', Number(q.hum)))
  if (q.hum === 'none') base = base.where((eb) => eb.and([eb('takes.hum_hz', 'is', null), eb('takes.status', '=', 'ready')]))
  if (q.status) base = base.where((eb) => eb('takes.status', '=', q.status!))

  const counted = await base
    .clearSelect()
    .select((eb) => eb.fn.countAll<number>().as('n'))
    .executeTakeFirstOrThrow()

  const sort = q.sort ?? (fts ? 'relevance' : 'createdAt')
  const order = q.order ?? (sort === 'createdAt' ? 'desc' : sort === 'relevance' ? 'asc' : 'asc')
  let page = base
  if (sort === 'relevance' && fts) {
    page = page.orderBy(sql`(SELECT bm25(take_fts) FROM take_fts WHERE take_fts MATCH ${fts} AND rowid = takes.id)`, order)
  } else if (sort !== 'relevance') {
    const col = sql.ref(SORT_COLUMNS[sort])
    // Unmeasured takes (null numbers) sort last either way.
    page = page.orderBy(sql`${col} IS NULL`).orderBy(col, order)
  }
  const rows = await page
    .orderBy('takes.id', order)
    .limit(q.pageSize)
    .offset((q.page - 1) * q.pageSize)
    .execute()
  return { rows, total: Number(counted.n) }
}
