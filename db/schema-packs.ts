// Tables of sample packs: packs, items, builds, followers and share links.
import type { Generated, Insertable, Selectable, Updateable } from 'kysely'

export interface PackTable {
  id: Generated<number>
  name: string
  description: Generated<string>
  licence_text: Generated<string>
  naming_template: string
  /** RenderSettings as JSON. */
  settings_json: string
  created_by: number | null
  created_at: Generated<string>
  updated_at: Generated<string>
}
export type PackRow = Selectable<PackTable>
export type NewPack = Insertable<PackTable>
export type PackUpdate = Updateable<PackTable>

export interface PackItemTable {
  id: Generated<number>
  pack_id: number
  take_id: number
  /** A region the range was copied from; a plain reference, no foreign key. */
  region_id: number | null
  /** 1-based, dense within the pack. */
  position: number
  start_seconds: number | null
  end_seconds: number | null
  /** Explicit output name, or null for the naming template. */
  name: string | null
  kind: Generated<string>
  /** RenderSettingsPatch as JSON, or null. */
  settings_json: string | null
  source_lufs: number | null
  source_true_peak_dbtp: number | null
  source_lra_lu: number | null
  /** 'take' or 'range'; null until measured. */
  source_measured_from: string | null
  created_by: number | null
  created_at: Generated<string>
  updated_at: Generated<string>
}
export type PackItemRow = Selectable<PackItemTable>
export type NewPackItem = Insertable<PackItemTable>
export type PackItemUpdate = Updateable<PackItemTable>

export interface PackBuildTable {
  id: Generated<number>
  pack_id: number
  version: number
  status: Generated<string>
  progress: Generated<number>
  job_id: number | null
  snapshot_json: string
  item_count: number
  /** Relative to the storage root, once done. */
  zip_path: string | null
  size_bytes: number | null
  sha256: string | null
  error: string | null
  failed_item_position: number | null
  failed_item_id: number | null
  failed_item_name: string | null
  created_by: number | null
  created_at: Generated<string>
  started_at: string | null
  finished_at: string | null
  published_at: string | null
  published_by: number | null
  /** "What changed", written by the designer when publishing (migration 20261202160000). */
  change_note: string | null
}
export type PackBuildRow = Selectable<PackBuildTable>
export type NewPackBuild = Insertable<PackBuildTable>
export type PackBuildUpdate = Updateable<PackBuildTable>

export interface PackBuildItemTable {
  build_id: number
  position: number
  item_id: number | null
  take_id: number
  file_name: string
  size_bytes: number
  sha256: string
  duration_seconds: number
  sample_rate: number
  bit_depth: number
  channels: number
  gain_db: number
  integrated_lufs: number | null
  true_peak_dbtp: number | null
  loudness_range_lu: number | null
  under_target_db: number | null
}
export type PackBuildItemRow = Selectable<PackBuildItemTable>
export type NewPackBuildItem = Insertable<PackBuildItemTable>

export interface PackFollowTable {
  pack_id: number
  user_id: number
  created_at: Generated<string>
}

export interface PackShareLinkTable {
  id: Generated<number>
  build_id: number
  /** Random part of the token; the token is signed with the app's secret (see server/packs/delivery/share-tokens.ts). */
  nonce: string
  expires_at: string
  max_downloads: number | null
  downloads: Generated<number>
  revoked_at: string | null
  last_download_at: string | null
  /** How far (bytes) the last counted download got when it did not finish; null when it finished. */
  open_download_bytes: number | null
  created_by: number | null
  created_at: Generated<string>
}
export type PackShareLinkRow = Selectable<PackShareLinkTable>

export interface PackTables {
  packs: PackTable
  pack_items: PackItemTable
  pack_builds: PackBuildTable
  pack_build_items: PackBuildItemTable
  pack_follows: PackFollowTable
  pack_share_links: PackShareLinkTable
}
