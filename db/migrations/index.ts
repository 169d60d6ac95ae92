// Every migration, in order. A static list (rather than a folder scan with
// dynamic import) works the same under tsx, vitest and a bundler; the test
// tests/api/migrations.test.ts fails if a file in this folder is missing here.
import type { Migration } from 'kysely'
import * as foundation from './20261201120000_foundation'
import * as capturesAndTakes from './20261201130000_captures_and_takes'
import * as takeSearch from './20261201140000_take_search'
import * as library from './20261201150000_library'
import * as packs from './20261201160000_packs'
import * as hardening from './20261202110000_hardening'
import * as takeRemovals from './20261202130000_take_removals'
import * as listeningNotes from './20261202150000_listening_notes'
import * as packBuildNotes from './20261202160000_pack_build_notes'
import * as regionKind from './20261202170500_region_kind'
import * as character from './20261202190000_character'
import * as jobsWithoutProgress from './20261202171000_jobs_without_progress'
import * as searchIndexes from './20261202180000_search_indexes'
import * as walkIndexes from './20261202200000_walk_indexes'
import * as searchTerms from './20261202210000_search_terms'

export const migrations: Record<string, Migration> = {
  '20261201120000_foundation': foundation,
  '20261201130000_captures_and_takes': capturesAndTakes,
  '20261201140000_take_search': takeSearch,
  '20261201150000_library': library,
  '20261201160000_packs': packs,
  '20261202110000_hardening': hardening,
  '20261202130000_take_removals': takeRemovals,
  '20261202150000_listening_notes': listeningNotes,
  '20261202160000_pack_build_notes': packBuildNotes,
  '20261202170500_region_kind': regionKind,
  '20261202171000_jobs_without_progress': jobsWithoutProgress,
  '20261202180000_search_indexes': searchIndexes,
  '20261202190000_character': character,
  '20261202200000_walk_indexes': walkIndexes,
  '20261202210000_search_terms': searchTerms,
}
