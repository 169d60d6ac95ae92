import { can } from '@shared/permissions'
import type { User } from '@shared/schemas/auth'
import {
  normalizeTag,
  TAGS_PER_TAKE,
  type BulkEditBody,
  type BulkEditResponse,
  type HistoryEvent,
  type HistoryKind,
  type StateSuggestion,
  type TagSuggestion,
  type UpdateTakeBody,
} from '@shared/schemas/library'
import type { Take } from '@shared/schemas/takes'
import type { Db } from '../core/database'
import { AppError, forbidden, notFound } from '../core/errors'
import type { TakeUpdate } from '../../db/schema'
import {
  addEvent,
  eventsOf,
  findTake,
  findTakesByIds,
  missingTakeIds,
  replaceSources,
  replaceTags,
  sourceNames,
  stateCounts,
  tagCounts,
  updateTake,
  type LinkChange,
  type TakeJoined,
} from './takes.repository'

// What other features may use of the takes table directly (ingest records new takes, analysis writes results).
export {
  addEvent,
  findTake,
  findTakeBySha,
  findTakesByIds,
  insertTake,
  missingTakeIds,
  replaceTags,
  updateTake,
  type TakeJoined,
} from './takes.repository'
import { takeRowToTake, takeRowsToTakes } from './takes.mapper'

/** A take's history entry, written with the user who caused it. */
export const recordEvent = (
  db: Db,
  takeId: number,
  user: Pick<User, 'id'> | null,
  kind: HistoryKind,
  summary: string,
) => addEvent(db, takeId, user?.id ?? null, kind, summary)

export async function loadTake(db: Db, id: number): Promise<TakeJoined> {
  const row = await findTake(db, id)
  if (!row) throw notFound('take', 'TAKE_NOT_FOUND')
  return row
}

/**
 * The one own/any rule for changing a take and its regions: 'takes:edit-any'
 * (admin, designer) may change every take; 'takes:edit-own' (recordist) only the
 * takes they uploaded.
 */
export function mayEditTake(user: User, take: Pick<TakeJoined, 'uploader_id'>): boolean {
  if (can(user.role, 'takes:edit-any')) return true
  return can(user.role, 'takes:edit-own') && take.uploader_id === user.id
}

export function assertMayEditTake(
  user: User,
  take: Pick<TakeJoined, 'id' | 'uploader_id' | 'uploader_name'>,
  what = 'edit',
): void {
  if (mayEditTake(user, take)) return
  if (!can(user.role, 'takes:edit-own')) throw forbidden()
  const by = take.uploader_name
    ? ` (take ${take.id} was uploaded by ${take.uploader_name})`
    : ` (take ${take.id} has no uploader on record)`
  throw forbidden(`You can ${what} only takes you uploaded${by}`)
}

/** 400 SOURCE_NOT_FOUND naming every id of `ids` that is not in the catalogue. */
async function checkSources(db: Db, ids: number[]): Promise<Map<number, string>> {
  const names = await sourceNames(db, ids)
  const missing = ids.filter((id) => !names.has(id))
  if (missing.length) {
    throw new AppError(400, 'SOURCE_NOT_FOUND', `No source device with id ${missing.join(', ')}`, {
      sourceIds: missing,
    })
  }
  return names
}

const FIELD_LABELS = { title: 'title', description: 'description', notes: 'notes' } as const

export const tagSummary = (added: string[], removed: string[]) =>
  [...added.map((t) => `+${t}`), ...removed.map((t) => `\u2212${t}`)].join(' ')

function sourcesSummary(change: LinkChange, names: Map<number, string>): string {
  const label = (id: number, state: string) => `${names.get(id) ?? `device ${id}`}${state ? ` (${state})` : ''}`
  return [
    ...change.added.map((l) => `+${label(l.sourceId, l.state)}`),
    ...change.removed.map((l) => `\u2212${label(l.sourceId, l.state)}`),
    ...change.restated.map(
      (r) => `${names.get(r.sourceId) ?? `device ${r.sourceId}`}: ${r.from || 'no state'} \u2192 ${r.to || 'no state'}`,
    ),
  ].join('; ')
}

const changed = (c: LinkChange) => c.added.length + c.removed.length + c.restated.length > 0

/** PATCH /api/takes/:id: the take's words, its tags and its device links, with one history entry per kind of change. */
export async function editTake(db: Db, user: User, id: number, body: UpdateTakeBody): Promise<Take> {
  const row = await loadTake(db, id)
  assertMayEditTake(user, row)
  const linkIds = (body.sources ?? []).map((l) => l.sourceId)
  await checkSources(db, linkIds)

  await db.transaction().execute(async (trx) => {
    const patch: TakeUpdate = {}
    const fields: string[] = []
    for (const key of ['title', 'description', 'notes'] as const) {
      if (body[key] !== undefined && body[key] !== row[key]) {
        patch[key] = body[key]
        fields.push(FIELD_LABELS[key])
      }
    }
    let touched = fields.length > 0
    if (fields.length) await recordEvent(trx, id, user, 'edited', `Edited ${joinWords(fields)}`)

    if (body.tags) {
      const { added, removed } = await replaceTags(trx, id, body.tags)
      if (added.length || removed.length) {
        touched = true
        await recordEvent(trx, id, user, 'tagged', `Tags ${tagSummary(added, removed)}`)
      }
    }
    if (body.sources) {
      const change = await replaceSources(trx, id, body.sources)
      if (changed(change)) {
        touched = true
        const names = await sourceNames(
          trx,
          [...change.added, ...change.removed, ...change.restated].map((l) => l.sourceId),
        )
        await recordEvent(trx, id, user, 'sources', `Devices ${sourcesSummary(change, names)}`)
      }
    }
    if (touched) await updateTake(trx, id, patch)
  })
  return takeRowToTake(db, await loadTake(db, id))
}

const joinWords = (w: string[]) => (w.length < 2 ? w.join('') : `${w.slice(0, -1).join(', ')} and ${w[w.length - 1]}`)

/**
 * The bulk-edit rule: designers and admins ('takes:edit-any') may bulk-edit any
 * take; recordists ('takes:edit-own') only takes they uploaded, and may move
 * them only into capture sessions they created. A selection holding takes of
 * others is refused whole (403 FORBIDDEN, naming those takes and their
 * uploaders in the message, their ids in details.takeIds), so nothing changes.
 */
async function assertMayBulkEdit(db: Db, user: User, body: BulkEditBody): Promise<void> {
  if (can(user.role, 'takes:edit-any')) return
  if (!can(user.role, 'takes:edit-own')) throw forbidden()
  const rows = await findTakesByIds(db, body.ids)
  const others = rows.filter((r) => r.uploader_id !== user.id)
  if (others.length) {
    const shown = others
      .slice(0, 10)
      .map(
        (r) =>
          `\u201c${r.title || r.filename}\u201d (${r.uploader_name ? `uploaded by ${r.uploader_name}` : 'no uploader on record'})`,
      )
    const more = others.length > shown.length ? ` and ${others.length - shown.length} more` : ''
    throw new AppError(
      403,
      'FORBIDDEN',
      `You can bulk-edit only takes you uploaded; ${others.length} of the ${rows.length} selected ${others.length === 1 ? 'is' : 'are'} not yours: ${shown.join(', ')}${more}. Nothing was changed.`,
      { takeIds: others.map((r) => r.id) },
    )
  }
  if (body.sessionId !== undefined) {
    const session = await db
      .selectFrom('capture_sessions')
      .select(['title', 'created_by'])
      .where('id', '=', body.sessionId)
      .executeTakeFirst()
    if (session && session.created_by !== user.id) {
      throw new AppError(
        403,
        'FORBIDDEN',
        `You can move takes only into capture sessions you created; \u201c${session.title}\u201d is not one of them. Nothing was changed.`,
        {
          sessionId: body.sessionId,
        },
      )
    }
  }
}

/**
 * POST /api/takes/bulk: add and remove tags, replace device links and move to
 * another capture session, for many takes in one transaction. Nothing changes
 * when any id, device or session is unknown, or when a take would end up with
 * more than 30 tags.
 */
export async function bulkEdit(db: Db, user: User, body: BulkEditBody): Promise<BulkEditResponse> {
  const missing = await missingTakeIds(db, body.ids)
  if (missing.length) {
    throw new AppError(404, 'TAKE_NOT_FOUND', `No take with id ${missing.join(', ')}; nothing was changed`, {
      missingIds: missing,
    })
  }
  await assertMayBulkEdit(db, user, body)
  const names = await checkSources(
    db,
    (body.sources ?? []).map((l) => l.sourceId),
  )
  let sessionTitle: string | null = null
  if (body.sessionId !== undefined) {
    const session = await db
      .selectFrom('capture_sessions')
      .select('title')
      .where('id', '=', body.sessionId)
      .executeTakeFirst()
    if (!session)
      throw new AppError(400, 'SESSION_NOT_FOUND', `No capture session with id ${body.sessionId}`, {
        sessionId: body.sessionId,
      })
    sessionTitle = session.title
  }

  const addTags = body.addTags ?? []
  const removeTags = body.removeTags ?? []
  let updated = 0
  await db.transaction().execute(async (trx) => {
    const rows = await findTakesByIds(trx, body.ids)
    const tooMany: number[] = []
    for (const row of rows) {
      let touched = false
      if (addTags.length || removeTags.length) {
        const current = (await trx.selectFrom('take_tags').select('tag').where('take_id', '=', row.id).execute()).map(
          (r) => r.tag,
        )
        const next = [...current.filter((t) => !removeTags.includes(t)), ...addTags.filter((t) => !current.includes(t))]
        if (next.length > TAGS_PER_TAKE) tooMany.push(row.id)
        const { added, removed } = await replaceTags(trx, row.id, next)
        if (added.length || removed.length) {
          touched = true
          await recordEvent(trx, row.id, user, 'tagged', `Tags ${tagSummary(added, removed)} (bulk edit)`)
        }
      }
      if (body.sources) {
        const change = await replaceSources(trx, row.id, body.sources)
        if (changed(change)) {
          touched = true
          const all = new Map(names)
          for (const [k, v] of await sourceNames(
            trx,
            change.removed.map((l) => l.sourceId),
          ))
            all.set(k, v)
          await recordEvent(trx, row.id, user, 'sources', `Devices ${sourcesSummary(change, all)} (bulk edit)`)
        }
      }
      if (body.sessionId !== undefined && row.session_id !== body.sessionId) {
        touched = true
        await trx.updateTable('takes').set({ session_id: body.sessionId }).where('id', '=', row.id).execute()
        await recordEvent(
          trx,
          row.id,
          user,
          'moved',
          `Moved from capture session \u201c${row.session_title}\u201d to \u201c${sessionTitle}\u201d`,
        )
      }
      if (touched) {
        updated++
        await updateTake(trx, row.id, {})
      }
    }
    if (tooMany.length) {
      throw new AppError(
        400,
        'TOO_MANY_TAGS',
        `Take ${tooMany.join(', ')} would have more than ${TAGS_PER_TAKE} tags; nothing was changed`,
        {
          takeIds: tooMany,
        },
      )
    }
  })
  const takes = await takeRowsToTakes(db, await findTakesByIds(db, body.ids), { withoutFileMetadata: true })
  return { updated, takes }
}

/** GET /api/tags: tags in use with how many takes carry each, most used first. */
export async function tagSuggestions(db: Db, q: string | undefined, limit: number): Promise<TagSuggestion[]> {
  const rows = await tagCounts(db, q ? normalizeTag(q) : '', limit)
  return rows.map((r) => ({ tag: r.tag, count: Number(r.n) }))
}

/** GET /api/states: operating states used on earlier device links, most used first. */
export async function stateSuggestions(
  db: Db,
  opts: { sourceId?: number; q?: string; limit: number },
): Promise<StateSuggestion[]> {
  const rows = await stateCounts(db, { sourceId: opts.sourceId, prefix: opts.q, limit: opts.limit })
  return rows.map((r) => ({ state: r.state, count: Number(r.n) }))
}

/** GET /api/takes/:id/history, newest first. */
export async function takeHistory(db: Db, id: number): Promise<HistoryEvent[]> {
  await loadTake(db, id)
  const rows = await eventsOf(db, id)
  return rows.map((r) => ({
    id: r.id,
    kind: r.kind,
    summary: r.summary,
    user: r.user_id && r.user_name ? { id: r.user_id, name: r.user_name } : null,
    createdAt: r.created_at,
  }))
}
