import type { CaptureSession, CreateCaptureSessionBody, UpdateCaptureSessionBody } from '@shared/schemas/captures'
import type { User } from '@shared/schemas/auth'
import type { Db } from '../core/database'
import { AppError, notFound } from '../core/errors'
import { findSession, listSessions, stripsOf, updateSession, type SessionJoined } from './captures.repository'

// Ingest checks the capture session exists before it accepts a file.
export { findSession } from './captures.repository'

const STRIP_TAKES = 24

function sessionRowToSession(
  r: SessionJoined,
  strips: { session_id: number; thumb_json: string | null }[],
): CaptureSession {
  return {
    id: r.id,
    title: r.title,
    date: r.date,
    location: r.location,
    rig: { pickup: r.pickup, gainDb: r.gain_db, recorder: r.recorder, notes: r.rig_notes },
    defaultSourceId: r.default_source_id,
    defaultState: r.default_state,
    createdBy: r.created_by && r.creator_name ? { id: r.created_by, name: r.creator_name } : null,
    createdAt: r.created_at,
    updatedAt: r.updated_at,
    takeCount: Number(r.take_count ?? 0),
    totalDurationSeconds: Number(r.total_duration ?? 0),
    humCounts: { '50': Number(r.hum50 ?? 0), '60': Number(r.hum60 ?? 0) },
    strip: strips
      .filter((s) => s.session_id === r.id)
      .slice(0, STRIP_TAKES)
      .map((s) => JSON.parse(s.thumb_json!) as number[]),
  }
}

export async function getSession(db: Db, id: number): Promise<CaptureSession> {
  const row = await findSession(db, id)
  if (!row) throw notFound('capture session', 'SESSION_NOT_FOUND')
  return sessionRowToSession(row, await stripsOf(db, [id]))
}

export async function listAllSessions(db: Db): Promise<CaptureSession[]> {
  const rows = await listSessions(db)
  const strips = await stripsOf(
    db,
    rows.map((r) => r.id),
  )
  return rows.map((r) => sessionRowToSession(r, strips))
}

async function checkSource(db: Db, sourceId: number | null | undefined) {
  if (!sourceId) return
  const found = await db.selectFrom('sources').select('id').where('id', '=', sourceId).executeTakeFirst()
  if (!found) throw new AppError(400, 'SOURCE_NOT_FOUND', `No source device with id ${sourceId}`)
}

export async function createSession(db: Db, actor: User, body: CreateCaptureSessionBody): Promise<CaptureSession> {
  await checkSource(db, body.defaultSourceId)
  const row = await db
    .insertInto('capture_sessions')
    .values({
      title: body.title,
      date: body.date,
      location: body.location,
      pickup: body.rig.pickup,
      gain_db: body.rig.gainDb,
      recorder: body.rig.recorder,
      rig_notes: body.rig.notes,
      default_source_id: body.defaultSourceId,
      default_state: body.defaultState,
      created_by: actor.id,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  return getSession(db, row.id)
}

export async function patchSession(db: Db, id: number, body: UpdateCaptureSessionBody): Promise<CaptureSession> {
  await getSession(db, id)
  await checkSource(db, body.defaultSourceId)
  await updateSession(db, id, {
    ...(body.title !== undefined && { title: body.title }),
    ...(body.date !== undefined && { date: body.date }),
    ...(body.location !== undefined && { location: body.location }),
    ...(body.rig?.pickup !== undefined && { pickup: body.rig.pickup }),
    ...(body.rig?.gainDb !== undefined && { gain_db: body.rig.gainDb }),
    ...(body.rig?.recorder !== undefined && { recorder: body.rig.recorder }),
    ...(body.rig?.notes !== undefined && { rig_notes: body.rig.notes }),
    ...(body.defaultSourceId !== undefined && { default_source_id: body.defaultSourceId }),
    ...(body.defaultState !== undefined && { default_state: body.defaultState }),
  })
  return getSession(db, id)
}
