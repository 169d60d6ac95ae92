// The logging sheet's rules without a screen: natural file-name order, empty
// values last, typed names matched to devices, and which links a row keeps.
import { describe, expect, it } from 'vitest'
import type { Source } from '@shared/schemas/sources'
import type { Take } from '@shared/schemas/takes'
import { findDevice, sortRows, withPrimary } from './sheet'

const take = (
  id: number,
  filename: string,
  o: { lufs?: number | null; device?: [number, string, string][]; createdAt?: string } = {},
) =>
  ({
    id,
    filename,
    createdAt: o.createdAt ?? `2026-12-01T10:00:0${id}.000Z`,
    status: 'ready',
    sources: (o.device ?? []).map(([sourceId, name, state]) => ({ sourceId, name, kind: 'other', state })),
    format: null,
    analysis:
      o.lufs === undefined
        ? null
        : {
            loudness: { integratedLufs: o.lufs },
            levels: { truePeakDbtp: null },
            spectrum: { mainsHum: { hz: null } },
          },
  }) as unknown as Take

describe('sortRows', () => {
  it('orders file names as a recorder numbers them (T2 before T10)', () => {
    const rows = [take(1, 'T10.WAV'), take(2, 'T2.WAV'), take(3, 't1.wav')]
    expect(sortRows(rows, 'filename', 'asc').map((t) => t.filename)).toEqual(['t1.wav', 'T2.WAV', 'T10.WAV'])
    expect(sortRows(rows, 'filename', 'desc').map((t) => t.filename)).toEqual(['T10.WAV', 'T2.WAV', 't1.wav'])
  })

  it('keeps rows without a value last in both directions, ties by file name', () => {
    const rows = [
      take(1, 'C.wav', { lufs: -20 }),
      take(2, 'A.wav'),
      take(3, 'B.wav', { lufs: -30 }),
      take(4, 'D.wav', { lufs: -20 }),
    ]
    expect(sortRows(rows, 'lufs', 'asc').map((t) => t.filename)).toEqual(['B.wav', 'C.wav', 'D.wav', 'A.wav'])
    // Ties stay in the recorder's order (file name ascending) whichever way the column runs.
    expect(sortRows(rows, 'lufs', 'desc').map((t) => t.filename)).toEqual(['C.wav', 'D.wav', 'B.wav', 'A.wav'])
  })

  it('sorts by device name and by upload time', () => {
    const rows = [
      take(1, 'A.wav', { device: [[2, 'Fan', '']] }),
      take(2, 'B.wav'),
      take(3, 'C.wav', { device: [[1, 'Charger', 'idle']] }),
    ]
    expect(sortRows(rows, 'device', 'asc').map((t) => t.id)).toEqual([3, 1, 2])
    expect(sortRows(rows, 'uploaded', 'desc').map((t) => t.id)).toEqual([3, 2, 1])
  })
})

describe('findDevice', () => {
  const sources = [
    { id: 1, name: 'Bench laptop charger' },
    { id: 2, name: 'Desk fan motor' },
  ] as Source[]
  it('matches whatever the case and spacing, and nothing else', () => {
    expect(findDevice(sources, '  bench LAPTOP   charger ')?.id).toBe(1)
    expect(findDevice(sources, 'Bench laptop')).toBeNull()
  })
})

describe('withPrimary', () => {
  it('puts the edited link first and keeps the others, once each', () => {
    const t = take(1, 'A.wav', {
      device: [
        [1, 'Charger', 'idle'],
        [2, 'Fan', 'on'],
        [3, 'Lamp', ''],
      ],
    })
    expect(withPrimary(t, { sourceId: 2, state: 'speed 1' })).toEqual([
      { sourceId: 2, state: 'speed 1' },
      { sourceId: 3, state: '' },
    ])
    expect(withPrimary(t, null)).toEqual([
      { sourceId: 2, state: 'on' },
      { sourceId: 3, state: '' },
    ])
  })
})
