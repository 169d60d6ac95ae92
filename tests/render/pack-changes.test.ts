// The starting text of a build's "what changed" note (server/packs/builds/changes.ts):
// items matched by the pack item they were rendered from.
import { describe, expect, it } from 'vitest'
import { DEFAULT_RENDER_SETTINGS } from '@shared/schemas/packs'
import { computeChanges } from '../../server/packs/builds/changes'
import type { BuildSnapshot, ItemSpec } from '../../server/packs/curation/item-spec'

const item = (itemId: number, fileName: string, o: Partial<ItemSpec> = {}): ItemSpec => ({
  itemId,
  position: itemId,
  takeId: itemId * 10,
  regionId: null,
  startSeconds: null,
  endSeconds: null,
  kind: 'one-shot',
  settings: DEFAULT_RENDER_SETTINGS,
  outputName: fileName.replace(/\.wav$/, ''),
  fileName,
  audioPath: `audio/${itemId}.wav`,
  sourceLevels: null,
  sampleRate: 48000,
  channels: 2,
  takeDurationSeconds: 4,
  title: '',
  description: '',
  sources: [],
  tags: [],
  sourceTimeReference: null,
  ...o,
})
const snap = (items: ItemSpec[], licenceText = 'Words.'): BuildSnapshot => ({
  pack: {
    id: 1,
    name: 'P',
    description: '',
    licenceText,
    namingTemplate: '{index}',
    settings: DEFAULT_RENDER_SETTINGS,
  },
  items,
})

describe('what changed between two builds', () => {
  it('lists items added, removed, renamed and re-rendered, one line each', () => {
    const before = snap([item(1, 'a.wav'), item(2, 'b.wav'), item(3, 'c.wav'), item(4, 'd.wav')])
    const after = snap(
      [item(1, 'a.wav'), item(2, 'b_renamed.wav'), item(3, 'c.wav', { startSeconds: 0.5 }), item(5, 'e.wav')],
      'New words.',
    )
    const c = computeChanges(before, after, 3)
    expect(c).toMatchObject({
      sinceVersion: 3,
      added: ['e.wav'],
      removed: ['d.wav'],
      renamed: [{ from: 'b.wav', to: 'b_renamed.wav' }],
      rerendered: ['c.wav'],
    })
    expect(c.text.trimEnd().split('\n')).toEqual([
      'Added: e.wav',
      'Removed: d.wav',
      'Renamed: b.wav → b_renamed.wav',
      'Re-rendered: c.wav',
      'The licence text changed.',
    ])
  })

  it('counts a changed render spec or type as re-rendered, not metadata', () => {
    const before = snap([item(1, 'a.wav'), item(2, 'b.wav')])
    const after = snap([
      item(1, 'a.wav', { settings: { ...DEFAULT_RENDER_SETTINGS, bitDepth: 16 } }),
      item(2, 'b.wav', { tags: ['new tag'], kind: 'loop' }),
    ])
    expect(computeChanges(before, after, 1).rerendered).toEqual(['a.wav', 'b.wav'])
    expect(computeChanges(before, snap([item(1, 'a.wav', { tags: ['x'] }), item(2, 'b.wav')]), 1).text).toBe(
      'No changes to the items since version 1.\n\n',
    )
  })

  it('says so for a first version', () => {
    expect(computeChanges(null, snap([item(1, 'a.wav')]), null).text).toBe('First published version: 1 item.\n\n')
  })

  it('leaves a blank line after the computed text, so words typed at its end start their own paragraph', () => {
    // The publish dialog prefills this text; a designer clicks into the box and types on.
    const first = computeChanges(null, snap([item(1, 'a.wav')]), null).text + 'First cut: one steady 50 Hz bed.'
    expect(first).toBe('First published version: 1 item.\n\nFirst cut: one steady 50 Hz bed.')
    const later = computeChanges(snap([item(1, 'a.wav')]), snap([item(1, 'a.wav'), item(2, 'b.wav')]), 1)
    expect(later.text + 'A second bed.').toBe('Added: b.wav\n\nA second bed.')
  })
})
