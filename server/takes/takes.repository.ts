import type { Db } from '../core/database'
import type { NewTake, TakeRow, TakeUpdate } from '../../db/schema'

export interface TakeJoined extends TakeRow {
  session_title: string
  uploader_name: string | null
}

export const selectTakes = (db: Db) =>
  db
    .selectFrom('takes')
    .innerJoin('capture_sessions', 'capture_sessions.id', 'takes.session_id')
    .leftJoin('users', 'users.id', 'takes.uploader_id')
    .selectAll('takes')
    .select(['capture_sessions.title as session_title', 'users.name as uploader_name'])

export const findTake = (db: Db, id: number): Promise<TakeJoined | undefined> =>
  selectTakes(db).where('takes.id', '=', id).executeTakeFirst()

export const findTakeBySha = (db: Db, sha256: string) =>
  db.selectFrom('takes').select(['id', 'filename']).where('sha256', '=', sha256).executeTakeFirst()

export const insertTake = (db: Db, take: NewTake) => db.insertInto('takes').values(take).returningAll().executeTakeFirstOrThrow()

export const updateTake = (db: Db, id: number, patch: TakeUpdate) =>
  db
    .updateTable('takes')
    .set({ ...patch, updated_at: new Date().toISOString() })
    .where('id', '=', id)
    .execute()

export async function sourcesOf(db: Db, takeIds: number[]) {
  if (!takeIds.length) return []
  return db
    .selectFrom('take_sources')
    .innerJoin('sources', 'sources.id', 'take_sources.source_id')
    .select(['take_sources.take_id', 'take_sources.source_id', 'take_sources.state', 'sources.name', 'sources.kind'])
    .where('take_sources.take_id', 'in', takeIds)
    .orderBy('sources.name')
    .execute()
}

export async function tagsOf(db: Db, takeIds: number[]) {
  if (!takeIds.length) return []
  return db.selectFrom('take_tags').select(['take_id', 'tag']).where('take_id', 'in', takeIds).orderBy('tag').execute()
}

export async function addEvent(db: Db, takeId: number, userId: number | null, kind: string, summary: string) {
  await db.insertInto('take_events').values({ take_id: takeId, user_id: userId, kind, summary }).execute()
}
