import { Analysis, WavFormat } from '@shared/schemas/analysis'
import type { SourceKind } from '@shared/schemas/sources'
import type { Take, TakeGlyph, TakeStatus } from '@shared/schemas/takes'
import type { Db } from '../core/database'
import { sourcesOf, tagsOf, type TakeJoined } from './takes.repository'
import { suggestedTags } from '@shared/schemas/character'

export interface MapOptions {
  /** Leave the file's own metadata out of the analysis (library lists). */
  withoutFileMetadata?: boolean
}

/** Rows to API takes, loading device links and tags for all of them in two queries. */
export async function takeRowsToTakes(db: Db, rows: TakeJoined[], opts: MapOptions = {}): Promise<Take[]> {
  const ids = rows.map((r) => r.id)
  const [links, tags] = await Promise.all([sourcesOf(db, ids), tagsOf(db, ids)])
  return rows.map((r) => {
    // The glyph is stored with the analysis (analysis.job.ts) and answered beside it.
    const stored = r.analysis_json ? (JSON.parse(r.analysis_json) as Analysis & { glyph?: TakeGlyph }) : null
    const { glyph = null, ...rest } = stored ?? {}
    const analysis = stored ? (rest as Analysis) : null
    if (analysis && opts.withoutFileMetadata)
      analysis.metadata = { bext: null, ixml: null, info: {}, cues: [], loops: [], tags: {}, dropped: [] }
    const own = tags.filter((t) => t.take_id === r.id).map((t) => t.tag)
    return {
      id: r.id,
      sessionId: r.session_id,
      sessionTitle: r.session_title,
      filename: r.filename,
      title: r.title,
      description: r.description,
      notes: r.notes,
      status: r.status as TakeStatus,
      progress: r.progress,
      error: r.error,
      sizeBytes: r.size_bytes,
      sha256: r.sha256,
      uploader: r.uploader_id && r.uploader_name ? { id: r.uploader_id, name: r.uploader_name } : null,
      createdAt: r.created_at,
      updatedAt: r.updated_at,
      sources: links
        .filter((l) => l.take_id === r.id)
        .map((l) => ({ sourceId: l.source_id, name: l.name, kind: l.kind as SourceKind, state: l.state })),
      tags: own,
      thumb: r.thumb_json ? (JSON.parse(r.thumb_json) as number[]) : [],
      glyph,
      format: r.format_json ? (JSON.parse(r.format_json) as WavFormat) : null,
      analysis,
      character: analysis?.character ?? null,
      suggestedTags: suggestedTags(analysis?.character, own),
    }
  })
}

export async function takeRowToTake(db: Db, row: TakeJoined, opts: MapOptions = {}): Promise<Take> {
  return (await takeRowsToTakes(db, [row], opts))[0]
}
