// GET /api/takes.csv: the library's current query (the same filters and sort as
// GET /api/takes) as one CSV file, every matching take rather than one page.
import { TakeQuery } from '@shared/schemas/takes'
import type { AppContext } from '../core/context'
import { csvDocument } from '../core/csv'
import { AppError } from '../core/errors'
import type { Api } from '../core/routes'
import type { Db } from '../core/database'
import { sourcesOf, tagsOf } from './takes.repository'
import { searchTakeRows } from './takes.search'

/** More than this many matches asks the user to narrow the query instead of building a huge file. */
export const EXPORT_MAX_TAKES = 50_000
/** Takes read per round: few rounds (each rescans the filter index), small enough to keep memory flat. */
const PAGE = 1000

export const LIBRARY_CSV_HEADER = [
  'id',
  'file',
  'title',
  'capture',
  'device',
  'state',
  'duration (s)',
  'format',
  'integrated loudness (LUFS)',
  'true peak (dBTP)',
  'loudness range (LU)',
  'hum (Hz)',
  'tags',
  'status',
]

const one = (v: number | null) => (v === null ? null : Math.round(v * 10) / 10)
const CHANNELS: Record<number, string> = { 1: 'mono', 2: 'stereo' }

function groupBy<T>(xs: T[], key: (x: T) => number): Map<number, T[]> {
  const out = new Map<number, T[]>()
  for (const x of xs) out.set(key(x), [...(out.get(key(x)) ?? []), x])
  return out
}

export async function libraryCsv(db: Db, q: TakeQuery): Promise<{ csv: string; count: number }> {
  const rows: (string | number | null)[][] = []
  for (let page = 1; ; page++) {
    // Counting stops just past the export limit: enough to refuse, without counting a whole large library.
    const {
      rows: found,
      total,
      totalCapped,
    } = await searchTakeRows(db, { ...q, page, pageSize: PAGE }, { countUpTo: EXPORT_MAX_TAKES })
    if (totalCapped) {
      throw new AppError(
        400,
        'EXPORT_TOO_LARGE',
        `The query matches more than ${EXPORT_MAX_TAKES} takes; narrow it to at most ${EXPORT_MAX_TAKES} to export`,
        { total, max: EXPORT_MAX_TAKES },
      )
    }
    const ids = found.map((r) => r.id)
    const [links, tags] = await Promise.all([sourcesOf(db, ids), tagsOf(db, ids)])
    const linksOf = groupBy(links, (l) => l.take_id)
    const tagsOfTake = groupBy(tags, (t) => t.take_id)
    for (const r of found) {
      const mine = linksOf.get(r.id) ?? []
      const format = r.sample_rate
        ? `${r.sample_rate / 1000} kHz ${r.bits_per_sample ?? '?'}-bit ${CHANNELS[r.channels ?? 0] ?? `${r.channels} ch`}`
        : ''
      rows.push([
        r.id,
        r.filename,
        r.title,
        r.session_title,
        mine.map((l) => l.name).join('; '),
        mine.map((l) => l.state).join('; '),
        r.duration_seconds === null ? null : Math.round(r.duration_seconds * 1000) / 1000,
        format,
        one(r.integrated_lufs),
        one(r.true_peak_dbtp),
        one(r.loudness_range_lu),
        r.hum_hz,
        (tagsOfTake.get(r.id) ?? []).map((t) => t.tag).join('; '),
        r.status,
      ])
    }
    if (found.length < PAGE || page * PAGE >= total) break
  }
  return { csv: csvDocument(LIBRARY_CSV_HEADER, rows), count: rows.length }
}

export function registerTakeExportRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/takes.csv', 'library:browse', async (req, res) => {
    const { page: _page, pageSize: _size, ...q } = TakeQuery.parse(req.query)
    const { csv } = await libraryCsv(ctx.db, { ...q, page: 1, pageSize: PAGE })
    const day = new Date().toISOString().slice(0, 10)
    res.set('Content-Type', 'text/csv; charset=utf-8').attachment(`strayfield-library-${day}.csv`).send(csv)
  })
}
