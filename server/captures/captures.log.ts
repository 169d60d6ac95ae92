// The capture log: every take of a capture session as one CSV row, in the
// logging sheet's default order (file name, as the recorder wrote them).
import { TakeQuery, type Take } from '@shared/schemas/takes'
import type { Db } from '../core/database'
import { csvDocument } from '../core/csv'
import { searchTakeRows } from '../takes/takes.search'
import { takeRowsToTakes } from '../takes/takes.mapper'
import { getSession } from './captures.service'

const round1 = (v: number | null | undefined) =>
  v === null || v === undefined || !Number.isFinite(v) ? null : Math.round(v * 10) / 10

export function formatLine(t: Take): string {
  const f = t.format
  if (!f) return ''
  const bits = f.encoding === 'float' ? `${f.bitsPerSample}-bit float` : `${f.bitsPerSample}-bit PCM`
  return `${f.sampleRate} Hz ${bits} ${f.channels} ch ${f.container}`
}

const COLUMNS: { header: string; value: (t: Take) => string | number | null }[] = [
  { header: 'File', value: (t) => t.filename },
  { header: 'Title', value: (t) => t.title },
  { header: 'Device', value: (t) => t.sources.map((s) => s.name).join('; ') },
  { header: 'State', value: (t) => t.sources.map((s) => s.state).join('; ') },
  { header: 'Duration (s)', value: (t) => (t.format ? Math.round(t.format.durationSeconds * 1000) / 1000 : null) },
  { header: 'Format', value: formatLine },
  { header: 'Integrated loudness (LUFS)', value: (t) => round1(t.analysis?.loudness.integratedLufs) },
  { header: 'True peak (dBTP)', value: (t) => round1(t.analysis?.levels.truePeakDbtp) },
  { header: 'Loudness range (LU)', value: (t) => round1(t.analysis?.loudness.loudnessRangeLu) },
  { header: 'Hum (Hz)', value: (t) => (t.analysis ? (t.analysis.spectrum.mainsHum.hz ?? 'none') : null) },
  { header: 'Tags', value: (t) => t.tags.join('; ') },
]

/** GET /api/capture-sessions/:id/log.csv: the file name and the CSV text. */
export async function captureLogCsv(db: Db, sessionId: number): Promise<{ title: string; csv: string }> {
  const session = await getSession(db, sessionId)
  const takes: Take[] = []
  for (let page = 1; ; page++) {
    const { rows } = await searchTakeRows(
      db,
      TakeQuery.parse({ sessionId, sort: 'filename', order: 'asc', page, pageSize: 200 }),
    )
    takes.push(...(await takeRowsToTakes(db, rows, { withoutFileMetadata: true })))
    if (rows.length < 200) break
  }
  return {
    title: `${session.date} ${session.title} capture log`,
    csv: csvDocument(
      COLUMNS.map((c) => c.header),
      takes.map((t) => COLUMNS.map((c) => c.value(t))),
    ),
  }
}
