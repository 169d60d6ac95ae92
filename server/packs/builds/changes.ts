// What a build changes against the newest version published before it: the
// starting text of the "what changed" note a designer writes when publishing.
// Items are matched by the pack item they were rendered from.
import type { BuildChanges } from '@shared/schemas/packs'
import type { BuildSnapshot, ItemSpec } from '../curation/item-spec'

/** Everything that shapes an item's samples (not its name or metadata). */
const shaping = (s: ItemSpec) =>
  JSON.stringify([s.takeId, s.audioPath, s.startSeconds, s.endSeconds, s.kind, s.settings])

/**
 * The computed lines, then a blank line: the designer's own words typed after the prefilled text
 * start a paragraph of their own instead of running on from the last sentence. Publishing trims
 * the note, so an untouched one is stored without the blank line.
 */
const forNote = (lines: string[]) => `${lines.join('\n')}\n\n`

export function computeChanges(
  prev: BuildSnapshot | null,
  next: BuildSnapshot,
  sinceVersion: number | null,
): BuildChanges {
  if (!prev) {
    const n = next.items.length
    return {
      sinceVersion: null,
      added: next.items.map((s) => s.fileName),
      removed: [],
      renamed: [],
      rerendered: [],
      text: forNote([`First published version: ${n} item${n === 1 ? '' : 's'}.`]),
    }
  }
  const before = new Map(prev.items.filter((s) => s.itemId !== null).map((s) => [s.itemId, s]))
  const after = new Set(next.items.map((s) => s.itemId))
  const added: string[] = []
  const renamed: BuildChanges['renamed'] = []
  const rerendered: string[] = []
  for (const s of next.items) {
    const old = s.itemId === null ? undefined : before.get(s.itemId)
    if (!old) {
      added.push(s.fileName)
      continue
    }
    if (old.fileName !== s.fileName) renamed.push({ from: old.fileName, to: s.fileName })
    if (shaping(old) !== shaping(s)) rerendered.push(s.fileName)
  }
  const removed = prev.items.filter((s) => !after.has(s.itemId)).map((s) => s.fileName)
  const lines = [
    ...added.map((f) => `Added: ${f}`),
    ...removed.map((f) => `Removed: ${f}`),
    ...renamed.map((r) => `Renamed: ${r.from} → ${r.to}`),
    ...rerendered.map((f) => `Re-rendered: ${f}`),
  ]
  if (prev.pack.licenceText.trim() !== next.pack.licenceText.trim()) lines.push('The licence text changed.')
  if (!lines.length) lines.push(`No changes to the items since version ${sinceVersion}.`)
  return { sinceVersion, added, removed, renamed, rerendered, text: forNote(lines) }
}
