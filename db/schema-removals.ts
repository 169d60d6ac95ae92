// Removed takes waiting in the "Removed" list until they are restored or purged.
import type { Generated, Selectable } from 'kysely'

export interface TakeRemovalTable {
  take_id: number
  removed_by: number | null
  removed_at: Generated<string>
}
export type TakeRemovalRow = Selectable<TakeRemovalTable>

export interface RemovalTables {
  take_removals: TakeRemovalTable
}
