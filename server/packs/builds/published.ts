// What everyone without 'packs:manage' sees of a pack: the newest published
// build as it was frozen (name, description, licence, items, file names and the
// numbers measured on the rendered files), never the draft a designer is editing.
// Single items are served straight out of the build's stored zip (delivery/send-build-item.ts).
import { effectiveSettings, type PackDetail, type PackItem, type PublishedItem } from '@shared/schemas/packs'
import type { Db } from '../../core/database'
import { AppError } from '../../core/errors'
import type { PackBuildItemRow } from '../../../db/schema-packs'
import { round2 } from '../../render/settings'
import type { BuildSnapshot, ItemSpec } from '../curation/item-spec'
import * as repo from '../packs.repository'

/** A build's frozen snapshot (a damaged or empty one reads as a pack with no items). */
export function snapshotOf(b: Pick<repo.BuildJoined, 'snapshot_json' | 'pack_name'>): BuildSnapshot {
  const s = JSON.parse(b.snapshot_json) as Partial<BuildSnapshot>
  const pack = {
    id: 0,
    name: b.pack_name,
    description: '',
    licenceText: '',
    namingTemplate: '',
    settings: effectiveSettings(null),
    ...s.pack,
  }
  return { pack, items: Array.isArray(s.items) ? s.items : [] }
}

export const itemSeconds = (s: Pick<ItemSpec, 'startSeconds' | 'endSeconds' | 'takeDurationSeconds'>) =>
  (s.endSeconds ?? s.takeDurationSeconds) - (s.startSeconds ?? 0)

/** The id a published item answers to: the pack item it was rendered from (stable across versions). */
export const publishedItemId = (s: Pick<ItemSpec, 'itemId' | 'position'>) => s.itemId ?? s.position

export const publishedItemNotFound = () => new AppError(404, 'ITEM_NOT_FOUND', 'No item with that id in this version')

/** The newest published build of a pack, or null. */
export async function newestPublished(db: Db, packId: number): Promise<repo.BuildJoined | null> {
  return (await repo.buildsOf(db, packId, true))[0] ?? null
}

/** "Name (state)" labels back into device and state. */
const splitSource = (label: string) => {
  const m = /^(.*) \((.*)\)$/.exec(label)
  return m ? { name: m[1], state: m[2] } : { name: label, state: '' }
}

/** The pack as its newest published build froze it; `base` carries the follow state and the build summaries. */
export async function publishedDetail(
  db: Db,
  base: Omit<PackDetail, 'items'>,
  build: repo.BuildJoined,
): Promise<PackDetail> {
  const snap = snapshotOf(build)
  const [rendered, facts] = await Promise.all([
    repo.buildItemsOf(db, build.id),
    repo.takeFacts(db, [...new Set(snap.items.map((s) => s.takeId))]),
  ])
  const items: PackItem[] = snap.items.map((s) => {
    const r = rendered.find((x) => x.position === s.position)
    const take = facts.takes.find((t) => t.id === s.takeId)
    return {
      id: publishedItemId(s),
      position: s.position,
      takeId: s.takeId,
      regionId: s.regionId,
      regionName: s.regionName ?? null,
      take: {
        id: s.takeId,
        title: take?.title ?? s.title,
        filename: take?.filename ?? '',
        sessionTitle: take?.session_title ?? '',
        status: take?.status ?? 'ready',
        durationSeconds: s.takeDurationSeconds,
        sampleRate: s.sampleRate,
        channels: s.channels,
        bitsPerSample: take?.bits_per_sample ?? null,
        sources: s.sources.map(splitSource),
        tags: s.tags,
      },
      startSeconds: s.startSeconds,
      endSeconds: s.endSeconds,
      durationSeconds: itemSeconds(s),
      kind: s.kind,
      name: null,
      outputName: s.outputName,
      fileName: s.fileName,
      settings: null,
      effectiveSettings: s.settings,
      source: {
        integratedLufs: round2(s.sourceLevels?.integratedLufs ?? null),
        truePeakDbtp: round2(s.sourceLevels?.truePeakDbtp ?? null),
        loudnessRangeLu: null,
        measuredFrom: s.startSeconds === null && s.endSeconds === null ? 'take' : 'range',
        expectedGainDb: null,
        expectedUnderTargetDb: null,
      },
      rendered: r ? renderedOf(r, build) : null,
    }
  })
  return {
    ...base,
    name: snap.pack.name,
    description: snap.pack.description,
    licenceText: snap.pack.licenceText,
    namingTemplate: snap.pack.namingTemplate,
    settings: snap.pack.settings,
    itemCount: items.length,
    totalDurationSeconds: items.reduce((n, i) => n + i.durationSeconds, 0),
    items,
  }
}

/** A rendered item's numbers as the API shows them (the draft editor and the published snapshot alike). */
export function renderedOf(
  r: PackBuildItemRow,
  build: { id: number; version: number },
): NonNullable<PackItem['rendered']> {
  return {
    buildId: build.id,
    version: build.version,
    file: r.file_name,
    integratedLufs: round2(r.integrated_lufs),
    truePeakDbtp: round2(r.true_peak_dbtp),
    loudnessRangeLu: round2(r.loudness_range_lu),
    gainDb: round2(r.gain_db)!,
    underTargetDb: r.under_target_db,
    sizeBytes: r.size_bytes,
    sha256: r.sha256,
  }
}

/** The items of a finished build as a listener needs them; `base` is the URL the item routes hang under. */
export async function publishedItems(db: Db, build: repo.BuildJoined, base: string): Promise<PublishedItem[]> {
  const snap = snapshotOf(build)
  const rendered = await repo.buildItemsOf(db, build.id)
  return snap.items.map((s) => {
    const r = rendered.find((x) => x.position === s.position)
    const id = publishedItemId(s)
    return {
      id,
      position: s.position,
      fileName: s.fileName,
      kind: s.kind,
      regionName: s.regionName ?? null,
      durationSeconds: r?.duration_seconds ?? itemSeconds(s),
      integratedLufs: round2(r?.integrated_lufs ?? null),
      truePeakDbtp: round2(r?.true_peak_dbtp ?? null),
      sizeBytes: r?.size_bytes ?? 0,
      auditionUrl: `${base}/items/${id}/audio`,
      downloadUrl: `${base}/items/${id}/download`,
    }
  })
}
