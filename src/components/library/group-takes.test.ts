import { describe, expect, it } from 'vitest'
import type { Take } from '@shared/schemas/takes'
import { groupTakes, parseGroupBy } from './group-takes'

const take = (id: number, sources: [string, string][]): Take =>
  ({
    id,
    sources: sources.map(([name, state], i) => ({ sourceId: i + 1, name, kind: 'motor', state })),
  }) as Take

const items = [
  take(1, [['Fan', 'high']]),
  take(2, []),
  take(3, [['Desk lamp', 'dimmed']]),
  take(4, [['Fan', 'low']]),
  take(5, [
    ['Fan', 'high'],
    ['Desk lamp', 'on'],
  ]),
]

describe('grouping library rows', () => {
  it('by device: one group per device set, by name, no device last, rows in list order', () => {
    const g = groupTakes(items, 'device')
    expect(g.map((x) => x.label)).toEqual(['Desk lamp', 'Fan', 'Fan + Desk lamp', 'No source device'])
    expect(g[1].items.map((t) => t.id)).toEqual([1, 4])
    expect(g.flatMap((x) => x.items)).toHaveLength(items.length)
  })

  it('by device and state: states split a device', () => {
    const g = groupTakes(items, 'device-state')
    expect(g.map((x) => `${x.label}:${x.items.length}`)).toEqual([
      'Desk lamp (dimmed):1',
      'Fan (high):1',
      'Fan (high) + Desk lamp (on):1',
      'Fan (low):1',
      'No source device:1',
    ])
  })

  it('not at all: one unnamed group; unknown values mean none', () => {
    expect(groupTakes(items, 'none')).toEqual([{ key: '', label: '', kind: null, items }])
    expect(parseGroupBy('colour')).toBe('none')
    expect(parseGroupBy('device')).toBe('device')
  })
})
