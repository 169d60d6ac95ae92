// The logging sheet's rules that need no screen: sorting rows, matching what
// was typed to a device, and what "fill down" copies.
import type { Source } from '@shared/schemas/sources'
import type { Take } from '@shared/schemas/takes'

export const SHEET_SORTS = [
  'filename',
  'uploaded',
  'device',
  'state',
  'duration',
  'lufs',
  'truePeak',
  'hum',
  'status',
] as const
export type SheetSort = (typeof SHEET_SORTS)[number]

/** The device a row is logged with: its first link (the sheet edits that one and keeps any others). */
export const primaryLink = (t: Take) => t.sources[0] ?? null

const key = (s: string) => s.normalize('NFKC').trim().replace(/\s+/g, ' ').toLocaleLowerCase()

/** The catalogue device a typed name means (case and spacing aside), or null. */
export const findDevice = (sources: Source[], typed: string) => sources.find((s) => key(s.name) === key(typed)) ?? null

// Natural order of file names ("T2" before "T10"), as a recorder numbers them.
const collator = new Intl.Collator(undefined, { numeric: true, sensitivity: 'base' })

const value = (t: Take, by: SheetSort): string | number | null => {
  switch (by) {
    case 'filename':
      return t.filename
    case 'uploaded':
      return t.createdAt
    case 'device':
      return primaryLink(t)?.name ?? null
    case 'state':
      return primaryLink(t)?.state || null
    case 'duration':
      return t.format?.durationSeconds ?? null
    case 'lufs':
      return t.analysis?.loudness.integratedLufs ?? null
    case 'truePeak':
      return t.analysis?.levels.truePeakDbtp ?? null
    case 'hum':
      return t.analysis ? (t.analysis.spectrum.mainsHum.hz ?? 0) : null
    case 'status':
      return t.status
  }
}

/** Rows sorted by a column; empty values last either way; ties keep the recorder's order (file name ascending, then id). */
export function sortRows(takes: Take[], by: SheetSort, order: 'asc' | 'desc'): Take[] {
  const sign = order === 'asc' ? 1 : -1
  return [...takes].sort((a, b) => {
    const va = value(a, by)
    const vb = value(b, by)
    if (va === null && vb !== null) return 1
    if (vb === null && va !== null) return -1
    let c = 0
    if (va !== null && vb !== null)
      c = typeof va === 'number' && typeof vb === 'number' ? va - vb : collator.compare(String(va), String(vb))
    return c * sign || collator.compare(a.filename, b.filename) || a.id - b.id
  })
}

/** The links a row gets when its device and state become `sourceId`/`state`: that link first, other links kept. */
export function withPrimary(t: Take, link: { sourceId: number; state: string } | null) {
  const rest = t.sources
    .slice(1)
    .filter((l) => l.sourceId !== link?.sourceId)
    .map((l) => ({ sourceId: l.sourceId, state: l.state }))
  return link ? [link, ...rest] : rest
}
