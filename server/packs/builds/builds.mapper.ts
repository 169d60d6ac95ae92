import type { BuildStatus, PackBuild } from '@shared/schemas/packs'
import type { BuildJoined } from '../packs.repository'
import { buildFileName } from '../curation/naming'

export function buildToApi(b: BuildJoined): PackBuild {
  return {
    id: b.id,
    packId: b.pack_id,
    packName: b.pack_name,
    version: b.version,
    status: b.status as BuildStatus,
    progress: b.status === 'done' ? 1 : b.progress,
    itemCount: b.item_count,
    sizeBytes: b.size_bytes,
    sha256: b.sha256,
    error: b.error,
    failedItem:
      b.failed_item_position !== null
        ? { position: b.failed_item_position, itemId: b.failed_item_id, name: b.failed_item_name ?? '' }
        : null,
    fileName: buildFileName(b.pack_name, b.version),
    downloadUrl: b.status === 'done' ? `/api/pack-builds/${b.id}/download` : null,
    createdBy: b.created_by && b.creator_name ? { id: b.created_by, name: b.creator_name } : null,
    createdAt: b.created_at,
    startedAt: b.started_at,
    finishedAt: b.finished_at,
    publishedAt: b.published_at,
    publishedBy: b.published_by && b.publisher_name ? { id: b.published_by, name: b.publisher_name } : null,
    changeNote: b.change_note,
  }
}
