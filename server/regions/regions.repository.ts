import type { Db } from '../core/database'
import type { NewRegion, RegionRow, RegionUpdate } from '../../db/schema-library'

export interface RegionJoined extends RegionRow {
  creator_name: string | null
}

const selectRegions = (db: Db) =>
  db
    .selectFrom('regions')
    .leftJoin('users', 'users.id', 'regions.created_by')
    .selectAll('regions')
    .select('users.name as creator_name')

export const regionsOf = (db: Db, takeId: number): Promise<RegionJoined[]> =>
  selectRegions(db)
    .where('regions.take_id', '=', takeId)
    .orderBy('regions.start_seconds')
    .orderBy('regions.id')
    .execute()

export const findRegion = (db: Db, takeId: number, id: number): Promise<RegionJoined | undefined> =>
  selectRegions(db).where('regions.take_id', '=', takeId).where('regions.id', '=', id).executeTakeFirst()

export const insertRegion = (db: Db, region: NewRegion) =>
  db.insertInto('regions').values(region).returning('id').executeTakeFirstOrThrow()

export const updateRegion = (db: Db, id: number, patch: RegionUpdate) =>
  db
    .updateTable('regions')
    .set({ ...patch, updated_at: new Date().toISOString() })
    .where('id', '=', id)
    .execute()

export const deleteRegion = (db: Db, id: number) => db.deleteFrom('regions').where('id', '=', id).execute()
