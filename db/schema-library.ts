// Tables of the library: regions, comments and what hangs off them.
// (Takes, tags, device links and history are in schema.ts.)
import type { Generated, Insertable, Selectable, Updateable } from 'kysely'

/** A named time range of a take ("usable", "clean loop", "burst 3"). */
export interface RegionTable {
  id: Generated<number>
  take_id: number
  name: string
  start_seconds: number
  end_seconds: number
  /** 'one-shot' | 'loop' | 'drone', or null for a plain named range. */
  kind: string | null
  created_by: number | null
  created_at: Generated<string>
  updated_at: Generated<string>
}
export type RegionRow = Selectable<RegionTable>
export type NewRegion = Insertable<RegionTable>
export type RegionUpdate = Updateable<RegionTable>

/** A comment on a take, optionally at a time or on a region; replies point at their parent. */
export interface CommentTable {
  id: Generated<number>
  take_id: number
  author_id: number | null
  /** Plain text exactly as written; never HTML. */
  body: string
  at_seconds: number | null
  region_id: number | null
  parent_id: number | null
  resolved_at: string | null
  resolved_by: number | null
  created_at: Generated<string>
  edited_at: string | null
  /** The frequency band a listening note is pinned to (both or neither). */
  low_hz: number | null
  high_hz: number | null
  /** keep | trim | re-take | reject (NOTE_OUTCOMES); top-level notes only. */
  outcome: string | null
}
export type CommentRow = Selectable<CommentTable>
export type NewComment = Insertable<CommentTable>
export type CommentUpdate = Updateable<CommentTable>

export interface LibraryTables {
  regions: RegionTable
  comments: CommentTable
}
