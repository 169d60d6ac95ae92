// Grouping the library's rows by what was heard: the source device, or the
// device and the state it was in. A take heard from several devices at once
// forms a group of its own ("Desk lamp + Router"), so no row shows twice and
// the row cursor walks each take once. Groups sort by name, takes without a
// device last; inside a group the rows keep the list's own sort.
import type { Take } from '@shared/schemas/takes'

export const GROUP_BY = ['none', 'device', 'device-state'] as const
export type GroupBy = (typeof GROUP_BY)[number]

export const GROUP_BY_LABELS: Record<GroupBy, string> = {
  none: 'None',
  device: 'Device',
  'device-state': 'Device and state',
}

export interface TakeGroup {
  key: string
  /** Words of the header; empty when not grouping. */
  label: string
  /** The first device's kind, for the header's colour chip. */
  kind: string | null
  items: Take[]
}

const NO_DEVICE = 'No source device'

function keyOf(t: Take, by: GroupBy): { key: string; label: string; kind: string | null } {
  if (!t.sources.length) return { key: '\uffff', label: NO_DEVICE, kind: null }
  const parts = t.sources.map((s) => (by === 'device-state' && s.state ? `${s.name} (${s.state})` : s.name))
  const label = [...new Set(parts)].join(' + ')
  return { key: label.toLocaleLowerCase(), label, kind: t.sources[0].kind }
}

export function groupTakes(items: Take[], by: GroupBy): TakeGroup[] {
  if (by === 'none') return [{ key: '', label: '', kind: null, items }]
  const groups = new Map<string, TakeGroup>()
  for (const t of items) {
    const k = keyOf(t, by)
    const g = groups.get(k.key) ?? { ...k, items: [] }
    g.items.push(t)
    groups.set(k.key, g)
  }
  return [...groups.values()].sort((a, b) => a.key.localeCompare(b.key))
}

export const parseGroupBy = (v: unknown): GroupBy => (GROUP_BY.includes(v as GroupBy) ? (v as GroupBy) : 'none')
