import { formatTakeTime, type CreateRegionBody, type Region, type UpdateRegionBody } from '@shared/schemas/library'
import type { User } from '@shared/schemas/auth'
import { longEnough, MIN_SELECTION_SECONDS, TOO_SHORT_MESSAGE } from '@shared/schemas/common'
import type { Db } from '../core/database'
import { AppError, notFound } from '../core/errors'
import { assertMayEditTake, loadTake, recordEvent } from '../takes/takes.service'
import type { TakeJoined } from '../takes/takes.service'
import {
  deleteRegion,
  findRegion,
  insertRegion,
  regionsOf,
  updateRegion,
  type RegionJoined,
} from './regions.repository'

// A note may be pinned to a region; the notes feature looks it up here.
export { findRegion } from './regions.repository'

const toRegion = (r: RegionJoined): Region => ({
  id: r.id,
  takeId: r.take_id,
  name: r.name,
  startSeconds: r.start_seconds,
  endSeconds: r.end_seconds,
  kind: (r.kind as Region['kind']) ?? null,
  createdBy: r.created_by && r.creator_name ? { id: r.created_by, name: r.creator_name } : null,
  createdAt: r.created_at,
  updatedAt: r.updated_at,
})

const span = (start: number, end: number) => `${formatTakeTime(start)}\u2013${formatTakeTime(end)}`

/** 0 ≤ start < end ≤ duration, at least MIN_SELECTION_SECONDS long (the duration is known from the file's header once uploaded). */
function checkRange(take: TakeJoined, start: number, end: number) {
  if (!(start >= 0 && start < end)) {
    throw new AppError(400, 'OUT_OF_RANGE', 'A region starts at 0 s or later and ends after it starts', {
      startSeconds: start,
      endSeconds: end,
    })
  }
  if (!longEnough(start, end))
    throw new AppError(400, 'RANGE_TOO_SHORT', TOO_SHORT_MESSAGE, {
      startSeconds: start,
      endSeconds: end,
      minSeconds: MIN_SELECTION_SECONDS,
    })
  const d = take.duration_seconds
  if (d !== null && end > d) {
    throw new AppError(400, 'OUT_OF_RANGE', `The region ends at ${end} s, after the end of the take (${d} s)`, {
      startSeconds: start,
      endSeconds: end,
      durationSeconds: d,
    })
  }
}

async function loadRegion(db: Db, takeId: number, regionId: number) {
  const r = await findRegion(db, takeId, regionId)
  if (!r) throw notFound('region on this take', 'REGION_NOT_FOUND')
  return r
}

export async function listRegions(db: Db, takeId: number): Promise<Region[]> {
  await loadTake(db, takeId)
  return (await regionsOf(db, takeId)).map(toRegion)
}

export async function createRegion(db: Db, user: User, takeId: number, body: CreateRegionBody): Promise<Region> {
  const take = await loadTake(db, takeId)
  assertMayEditTake(user, take, 'mark regions on')
  checkRange(take, body.startSeconds, body.endSeconds)
  const id = await db.transaction().execute(async (trx) => {
    const { id } = await insertRegion(trx, {
      take_id: takeId,
      name: body.name,
      start_seconds: body.startSeconds,
      end_seconds: body.endSeconds,
      kind: body.kind ?? null,
      created_by: user.id,
    })
    await recordEvent(
      trx,
      takeId,
      user,
      'region-added',
      `Region \u201c${body.name}\u201d ${span(body.startSeconds, body.endSeconds)}${body.kind ? ` (${body.kind})` : ''}`,
    )
    return id
  })
  return toRegion(await loadRegion(db, takeId, id))
}

export async function patchRegion(
  db: Db,
  user: User,
  takeId: number,
  regionId: number,
  body: UpdateRegionBody,
): Promise<Region> {
  const take = await loadTake(db, takeId)
  const region = await loadRegion(db, takeId, regionId)
  assertMayEditTake(user, take, 'change regions on')
  const next = {
    name: body.name ?? region.name,
    start: body.startSeconds ?? region.start_seconds,
    end: body.endSeconds ?? region.end_seconds,
    kind: body.kind === undefined ? region.kind : body.kind,
  }
  checkRange(take, next.start, next.end)
  const changes: string[] = []
  if (next.name !== region.name) changes.push(`renamed \u201c${region.name}\u201d \u2192 \u201c${next.name}\u201d`)
  if (next.start !== region.start_seconds || next.end !== region.end_seconds)
    changes.push(`${span(region.start_seconds, region.end_seconds)} \u2192 ${span(next.start, next.end)}`)
  if (next.kind !== region.kind) changes.push(`kind ${region.kind ?? 'none'} \u2192 ${next.kind ?? 'none'}`)
  if (changes.length) {
    await db.transaction().execute(async (trx) => {
      await updateRegion(trx, regionId, {
        name: next.name,
        start_seconds: next.start,
        end_seconds: next.end,
        kind: next.kind,
      })
      await recordEvent(trx, takeId, user, 'region-changed', `Region \u201c${next.name}\u201d: ${changes.join('; ')}`)
    })
  }
  return toRegion(await loadRegion(db, takeId, regionId))
}

/** Comments on the region stay, no longer tied to it. */
export async function removeRegion(db: Db, user: User, takeId: number, regionId: number): Promise<void> {
  const take = await loadTake(db, takeId)
  const region = await loadRegion(db, takeId, regionId)
  assertMayEditTake(user, take, 'remove regions on')
  await db.transaction().execute(async (trx) => {
    await deleteRegion(trx, regionId)
    await recordEvent(
      trx,
      takeId,
      user,
      'region-removed',
      `Region \u201c${region.name}\u201d ${span(region.start_seconds, region.end_seconds)} removed`,
    )
  })
}
