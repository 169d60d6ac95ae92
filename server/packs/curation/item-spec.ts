// One item as the renderer needs it: the take's file, the range, the effective
// settings, the output name and the metadata written into the file. Builds
// freeze these specs when they are asked for (BuildSnapshot), so a build renders
// what the pack held at that moment, however the pack is edited afterwards.
import type { ItemKind, ItemModulation, RenderSettings } from '@shared/schemas/packs'
import type { ItemMetadata } from '../../render/metadata'
import type { RenderRequest } from '../../render/render'
import type { SourceLevels } from '../../render/settings'

export interface ItemSpec {
  itemId: number | null
  /** 1-based. */
  position: number
  takeId: number
  regionId: number | null
  /** The region's name when the item was cut from one (absent in snapshots of builds made before regions were named). */
  regionName?: string | null
  startSeconds: number | null
  endSeconds: number | null
  kind: ItemKind
  settings: RenderSettings
  /** Without `.wav`. */
  outputName: string
  fileName: string
  /** The zip folder under a by-kind profile (the first source device's kind), else null/absent: at the top. */
  folder?: string | null
  /** The name before the profile's length limit shortened it (absent in builds made before profiles). */
  fullName?: string
  /** The take's uploaded file name (absent in builds made before profiles). */
  sourceFile?: string
  /** Relative to the storage root. */
  audioPath: string
  sourceLevels: SourceLevels | null
  sampleRate: number | null
  channels: number | null
  /** Of the whole take. */
  takeDurationSeconds: number
  title: string
  description: string
  /** "name (state)" of each source device. */
  sources: string[]
  tags: string[]
  /** The source's bext time reference (samples since midnight), if it has one. */
  sourceTimeReference: number | null
  /** A control curve to write beside the audio (absent in builds made before them). */
  modulation?: ItemModulation | null
}

export interface BuildSnapshot {
  pack: {
    id: number
    name: string
    description: string
    licenceText: string
    namingTemplate: string
    settings: RenderSettings
  }
  items: ItemSpec[]
}

/** Where the item's file sits in the zip: `folder/name.wav`, or `name.wav` at the top. */
export const zipPath = (spec: Pick<ItemSpec, 'folder' | 'fileName'>): string =>
  spec.folder ? `${spec.folder}/${spec.fileName}` : spec.fileName

/** Frames the item will render, for progress (loops move by a few frames; a conversion reads the source once more). */
export function expectedFrames(spec: ItemSpec): number {
  const seconds = (spec.endSeconds ?? spec.takeDurationSeconds) - (spec.startSeconds ?? 0)
  const rate = spec.sampleRate ?? 48000
  const p = spec.settings.profile
  const converts =
    p && ((p.sampleRate !== 'source' && p.sampleRate !== rate) || (p.channels !== 'keep' && (spec.channels ?? 1) > 1))
  const out = converts && p.sampleRate !== 'source' ? p.sampleRate : rate
  return Math.max(1, Math.round(seconds * (converts ? rate + out : rate)))
}

/** An item longer than the profile allows, as the refusal names it; null when every item fits. */
export function tooLongItem(specs: ItemSpec[]): { spec: ItemSpec; seconds: number; maxSeconds: number } | null {
  for (const spec of specs) {
    const max = spec.settings.profile?.maxSeconds ?? null
    const seconds = (spec.endSeconds ?? spec.takeDurationSeconds) - (spec.startSeconds ?? 0)
    if (max !== null && seconds > max + 1e-9) return { spec, seconds, maxSeconds: max }
  }
  return null
}

/** "item 3 (hum_01) lasts 42.00 s, longer than the export profile's limit of 20 s" */
export const tooLongText = (t: {
  spec: Pick<ItemSpec, 'position' | 'outputName'>
  seconds: number
  maxSeconds: number
}) =>
  `item ${t.spec.position} (${t.spec.outputName}) lasts ${t.seconds.toFixed(2)} s, longer than the export profile's limit of ${t.maxSeconds} s`

/** bext description: the title, the region, the sources and the tags, within the chunk's 256 characters. */
export function describeItem(
  spec: Pick<ItemSpec, 'title' | 'description' | 'sources' | 'tags' | 'regionName'>,
): string {
  const parts = [
    spec.title || spec.description,
    spec.regionName ? `Region: ${spec.regionName}` : '',
    spec.sources.length ? `Sources: ${spec.sources.join('; ')}` : '',
    spec.tags.length ? `Tags: ${spec.tags.join(', ')}` : '',
  ]
  return parts.filter(Boolean).join('. ').slice(0, 256)
}

export function itemMetadata(spec: ItemSpec, originatorReference: string, createdAt: Date): ItemMetadata {
  const keywords = [...new Set([...spec.tags, ...spec.sources.map((s) => s.replace(/ \(.*\)$/, ''))])]
  const startFrame = spec.startSeconds !== null && spec.sampleRate ? Math.round(spec.startSeconds * spec.sampleRate) : 0
  return {
    title: spec.title || spec.outputName,
    description: describeItem(spec),
    keywords,
    originatorReference,
    timeReference: spec.sourceTimeReference !== null ? spec.sourceTimeReference + startFrame : 0,
    createdAt,
  }
}

export function renderRequest(
  spec: ItemSpec,
  sourcePath: string,
  originatorReference: string,
  createdAt: Date,
): RenderRequest {
  return {
    sourcePath,
    startSeconds: spec.startSeconds,
    endSeconds: spec.endSeconds,
    kind: spec.kind,
    settings: spec.settings,
    sourceLevels: spec.sourceLevels,
    metadata: itemMetadata(spec, originatorReference, createdAt),
    // Reproducible: the same item renders the same samples in a preview and in every build.
    ditherSeed: ditherSeedOf(spec),
  }
}

function ditherSeedOf(spec: ItemSpec): number {
  let h = 0x811c9dc5
  const key = `${spec.takeId}:${spec.startSeconds}:${spec.endSeconds}:${spec.kind}`
  for (let i = 0; i < key.length; i++) h = Math.imul(h ^ key.charCodeAt(i), 0x01000193)
  return h >>> 0
}

/** "item 3 (hum_transformer_01): take 12's audio file is missing" */
export function describeItemFailure(spec: Pick<ItemSpec, 'position' | 'outputName' | 'takeId'>, err: unknown): string {
  const e = err as NodeJS.ErrnoException & { reason?: string }
  let why: string
  if (e?.code === 'ENOENT') why = `take ${spec.takeId}'s audio file is missing`
  else if (e?.name === 'TooLongForProfile') why = e.message
  else if (e?.name === 'WavFormatError') why = `take ${spec.takeId}'s audio file cannot be read: ${e.message}`
  else why = e instanceof Error ? e.message : String(err)
  return `item ${spec.position} (${spec.outputName}): ${why}`
}
