// Removing a take, the Removed list, restoring, and purging after 30 days.
//
// A removal is a row in take_removals; the take, its audio and measurements stay
// until the purge, so restoring is deleting that row. Lists and counts leave
// removed takes out through `visibleTake` (search, capture sessions, devices).
// A take in a published pack build cannot be removed (409 naming the pack
// version): producers and share recipients hold that audio.
import { sql } from 'kysely'
import { can } from '@shared/permissions'
import type { User } from '@shared/schemas/auth'
import { REMOVAL_KEEP_DAYS, type RemovedTake } from '@shared/schemas/removals'
import type { Db } from '../core/database'
import type { Storage } from '../core/storage'
import { AppError } from '../core/errors'
import { assertMayEditTake, loadTake, recordEvent } from './takes.service'

const DAY_MS = 24 * 60 * 60 * 1000

/** SQL condition on `takes.id`: the take is not in the Removed list. */
export const visibleTake = (idColumn = 'takes.id') =>
  sql<boolean>`${sql.ref(idColumn)} NOT IN (SELECT take_id FROM take_removals)`

export const purgeAfter = (removedAt: string) =>
  new Date(Date.parse(removedAt) + REMOVAL_KEEP_DAYS * DAY_MS).toISOString()

const selectRemoved = (db: Db) =>
  db
    .selectFrom('take_removals as r')
    .innerJoin('takes as t', 't.id', 'r.take_id')
    .innerJoin('capture_sessions as s', 's.id', 't.session_id')
    .leftJoin('users as up', 'up.id', 't.uploader_id')
    .leftJoin('users as rb', 'rb.id', 'r.removed_by')
    .select([
      't.id',
      't.filename',
      't.title',
      't.session_id',
      's.title as session_title',
      't.uploader_id',
      'up.name as uploader_name',
      'r.removed_at',
      'r.removed_by',
      'rb.name as removed_by_name',
    ])

type RemovedRow = Awaited<ReturnType<ReturnType<typeof selectRemoved>['executeTakeFirstOrThrow']>>

const toRemoved = (r: RemovedRow): RemovedTake => ({
  takeId: r.id,
  filename: r.filename,
  title: r.title,
  sessionId: r.session_id,
  sessionTitle: r.session_title,
  uploader: r.uploader_id && r.uploader_name ? { id: r.uploader_id, name: r.uploader_name } : null,
  removedAt: r.removed_at,
  removedBy: r.removed_by && r.removed_by_name ? { id: r.removed_by, name: r.removed_by_name } : null,
  purgeAfter: purgeAfter(r.removed_at),
})

/** Published pack versions that hold the take, e.g. [{ packId, packName, version }]. */
export async function publishedBuildsOf(db: Db, takeId: number) {
  return db
    .selectFrom('pack_build_items as bi')
    .innerJoin('pack_builds as b', 'b.id', 'bi.build_id')
    .innerJoin('packs as p', 'p.id', 'b.pack_id')
    .select(['p.id as pack_id', 'p.name as pack_name', 'b.version'])
    .where('bi.take_id', '=', takeId)
    .where('b.published_at', 'is not', null)
    .groupBy(['p.id', 'b.version'])
    .orderBy('p.name')
    .orderBy('b.version')
    .execute()
}

const isRemoved = async (db: Db, takeId: number) =>
  !!(await db.selectFrom('take_removals').select('take_id').where('take_id', '=', takeId).executeTakeFirst())

/** DELETE /api/takes/:id: the uploader, designers and admins; never a take in a published build. */
export async function removeTake(db: Db, user: User, takeId: number): Promise<RemovedTake> {
  return db.transaction().execute(async (trx) => {
    const row = await loadTake(trx, takeId)
    assertMayEditTake(user, row, 'remove')
    if (await isRemoved(trx, takeId))
      throw new AppError(409, 'TAKE_ALREADY_REMOVED', `Take ${takeId} is already in the Removed list`)
    const held = await publishedBuildsOf(trx, takeId)
    if (held.length) {
      const names = held.map((h) => `\u201c${h.pack_name}\u201d version ${h.version}`).join(', ')
      throw new AppError(
        409,
        'TAKE_PUBLISHED',
        `Take ${takeId} is in ${names}, which ${held.length === 1 ? 'is' : 'are'} published; it cannot be removed`,
        {
          builds: held.map((h) => ({ packId: h.pack_id, packName: h.pack_name, version: h.version })),
        },
      )
    }
    await trx.insertInto('take_removals').values({ take_id: takeId, removed_by: user.id }).execute()
    await recordEvent(trx, takeId, user, 'removed', `Removed; kept ${REMOVAL_KEEP_DAYS} days in the Removed list`)
    return toRemoved(await selectRemoved(trx).where('r.take_id', '=', takeId).executeTakeFirstOrThrow())
  })
}

/** POST /api/takes/:id/restore: back into the library, as it was. */
export async function restoreTake(db: Db, user: User, takeId: number): Promise<void> {
  await db.transaction().execute(async (trx) => {
    const row = await loadTake(trx, takeId)
    assertMayEditTake(user, row, 'restore')
    if (!(await isRemoved(trx, takeId)))
      throw new AppError(409, 'TAKE_NOT_REMOVED', `Take ${takeId} is not in the Removed list`)
    await trx.deleteFrom('take_removals').where('take_id', '=', takeId).execute()
    await recordEvent(trx, takeId, user, 'restored', 'Restored from the Removed list')
  })
}

/** GET /api/removed-takes: recordists see the takes they uploaded; designers and admins all. */
export async function listRemoved(db: Db, user: User): Promise<RemovedTake[]> {
  let q = selectRemoved(db).orderBy('r.removed_at', 'desc').orderBy('t.id', 'desc')
  if (!can(user.role, 'takes:edit-any')) q = q.where('t.uploader_id', '=', user.id)
  return (await q.execute()).map(toRemoved)
}

/**
 * Deletes takes removed more than 30 days before `now`, with their audio and
 * derived files. A take that has meanwhile entered a published build is kept
 * (its audio is delivered). The row goes first, in a transaction; files after,
 * so a crash leaves at worst an orphan file, never a row without its audio.
 */
export async function purgeRemovedTakes(db: Db, storage: Storage, now = new Date()): Promise<number[]> {
  const cutoff = new Date(now.getTime() - REMOVAL_KEEP_DAYS * DAY_MS).toISOString()
  const due = await db
    .selectFrom('take_removals as r')
    .innerJoin('takes as t', 't.id', 'r.take_id')
    .select(['t.id', 't.audio_path'])
    .where('r.removed_at', '<=', cutoff)
    .execute()
  const purged: number[] = []
  for (const take of due) {
    const gone = await db.transaction().execute(async (trx) => {
      if ((await publishedBuildsOf(trx, take.id)).length) return false
      await trx.deleteFrom('takes').where('id', '=', take.id).execute()
      return true
    })
    if (!gone) continue
    purged.push(take.id)
    await storage.remove(take.audio_path)
    await storage.removeDir(storage.derivedRelative(take.id))
  }
  return purged
}

/** Purges at start and then once a day; returns a stop function. */
export function startRemovalSweep(
  db: Db,
  storage: Storage,
  log: (msg: string) => void = console.warn,
): () => Promise<void> {
  const sweep = () =>
    purgeRemovedTakes(db, storage)
      .then((ids) => ids.length && log(`Purged ${ids.length} removed take(s): ${ids.join(', ')}`))
      .catch((e: unknown) => log(`Purging removed takes failed: ${e instanceof Error ? e.message : String(e)}`))
  const first = sweep()
  const timer = setInterval(() => void sweep(), DAY_MS)
  timer.unref()
  return async () => {
    clearInterval(timer)
    await first
  }
}
