import { sql } from 'kysely'
import type { Db } from '../core/database'
import type { CaptureSessionUpdate } from '../../db/schema'
import { visibleTake } from '../takes/takes.removal'

export const selectSessions = (db: Db) =>
  db
    .selectFrom('capture_sessions as s')
    .leftJoin('users as u', 'u.id', 's.created_by')
    .selectAll('s')
    .select((eb) => [
      'u.name as creator_name',
      eb
        .selectFrom('takes')
        .whereRef('takes.session_id', '=', 's.id')
        .where(visibleTake())
        .select(eb.fn.countAll<number>().as('n'))
        .as('take_count'),
      eb
        .selectFrom('takes')
        .whereRef('takes.session_id', '=', 's.id')
        .where(visibleTake())
        .select(sql<number>`coalesce(sum(duration_seconds), 0)`.as('d'))
        .as('total_duration'),
      eb
        .selectFrom('takes')
        .whereRef('takes.session_id', '=', 's.id')
        .where(visibleTake())
        .where('hum_hz', '=', 50)
        .select(eb.fn.countAll<number>().as('n'))
        .as('hum50'),
      eb
        .selectFrom('takes')
        .whereRef('takes.session_id', '=', 's.id')
        .where(visibleTake())
        .where('hum_hz', '=', 60)
        .select(eb.fn.countAll<number>().as('n'))
        .as('hum60'),
    ])

export type SessionJoined = Awaited<ReturnType<ReturnType<typeof selectSessions>['executeTakeFirstOrThrow']>>

export const findSession = (db: Db, id: number) => selectSessions(db).where('s.id', '=', id).executeTakeFirst()

export const listSessions = (db: Db) => selectSessions(db).orderBy('s.date', 'desc').orderBy('s.id', 'desc').execute()

/** Up to 24 take thumbnails per session, in upload order, for the board's waveform strip. */
export async function stripsOf(db: Db, sessionIds: number[]) {
  if (!sessionIds.length) return []
  return db
    .selectFrom('takes')
    .select(['session_id', 'thumb_json'])
    .where('session_id', 'in', sessionIds)
    .where('thumb_json', 'is not', null)
    .where(visibleTake())
    .orderBy('id')
    .execute()
}

export const updateSession = (db: Db, id: number, patch: CaptureSessionUpdate) =>
  db
    .updateTable('capture_sessions')
    .set({ ...patch, updated_at: new Date().toISOString() })
    .where('id', '=', id)
    .execute()
