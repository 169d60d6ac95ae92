import {
  formatTakeTime,
  resolveMentions,
  type Comment,
  type CreateCommentBody,
  type UpdateCommentBody,
} from '@shared/schemas/library'
import type { User } from '@shared/schemas/auth'
import { NOTE_OUTCOMES, type NoteOutcome } from '@shared/schemas/notes'
import type { AppContext } from '../core/context'
import type { Db } from '../core/database'
import { AppError, forbidden, notFound } from '../core/errors'
import { nowIso } from '../core/time'
import { mentionMail } from '../mail/messages'
import { findRegion } from '../regions/regions.service'
import { loadTake, recordEvent } from '../takes/takes.service'
import type { TakeJoined } from '../takes/takes.service'
import {
  activeMembers,
  commentsOf,
  findComment,
  insertComment,
  updateComment,
  type CommentJoined,
} from './comments.repository'

type Member = Awaited<ReturnType<typeof activeMembers>>[number]

const asOutcome = (v: string | null): NoteOutcome | null =>
  (NOTE_OUTCOMES as readonly string[]).includes(v ?? '') ? (v as NoteOutcome) : null

/** API comments from rows in time order: top-level ones are numbered 1, 2, 3… */
function toComments(rows: CommentJoined[], members: Member[]): Comment[] {
  let n = 0
  return rows.map((r) => ({
    id: r.id,
    takeId: r.take_id,
    parentId: r.parent_id,
    number: r.parent_id === null ? ++n : null,
    author: r.author_id && r.author_name ? { id: r.author_id, name: r.author_name } : null,
    body: r.body,
    atSeconds: r.at_seconds,
    lowHz: r.low_hz,
    highHz: r.high_hz,
    outcome: r.parent_id === null ? asOutcome(r.outcome) : null,
    regionId: r.region_id,
    resolved: r.resolved_at !== null,
    resolvedAt: r.resolved_at,
    resolvedBy: r.resolved_by && r.resolver_name ? { id: r.resolved_by, name: r.resolver_name } : null,
    createdAt: r.created_at,
    editedAt: r.edited_at,
    mentions: resolveMentions(r.body, members).map((m) => ({ id: m.id, name: m.name })),
  }))
}

export async function listComments(db: Db, takeId: number): Promise<Comment[]> {
  await loadTake(db, takeId)
  const [rows, members] = await Promise.all([commentsOf(db, takeId), activeMembers(db)])
  return toComments(rows, members)
}

async function loadComment(db: Db, takeId: number, id: number): Promise<CommentJoined> {
  const row = await findComment(db, id)
  if (!row || row.take_id !== takeId) throw notFound('comment on this take', 'COMMENT_NOT_FOUND')
  return row
}

const excerpt = (body: string, max = 80) => {
  const flat = body.replace(/\s+/g, ' ').trim()
  return flat.length > max ? `${flat.slice(0, max - 1)}…` : flat
}

/** The first comment of the thread `c` belongs to. */
function rootOf(all: Comment[], c: Comment): Comment {
  let cur = c
  for (let guard = 0; cur.parentId !== null && guard < 1000; guard++) {
    const parent = all.find((x) => x.id === cur.parentId)
    if (!parent) break
    cur = parent
  }
  return cur
}

/**
 * The moment of the take a comment is about: its own time, else the start of
 * its region, else the moment of its thread's first comment, else the start.
 */
async function momentOf(db: Db, all: Comment[], c: Comment): Promise<number> {
  for (const x of [c, rootOf(all, c)]) {
    if (x.atSeconds !== null) return x.atSeconds
    if (x.regionId !== null) {
      const region = await findRegion(db, c.takeId, x.regionId)
      if (region) return region.start_seconds
    }
  }
  return 0
}

export interface CommentOptions {
  /** Mail the members the comment mentions (default true; the demo seed turns it off). */
  notify?: boolean
}

/**
 * Mails each mentioned active member (never the author) a link to the take at
 * the comment's moment. Runs after the comment is saved; a failed delivery is
 * logged and never undoes the comment.
 */
function notifyMentions(
  ctx: AppContext,
  take: TakeJoined,
  comment: Comment,
  author: User,
  recipients: Member[],
  all: Comment[],
): Promise<void> {
  const to = recipients.filter((m) => m.id !== author.id)
  if (!to.length) return Promise.resolve()
  return (async () => {
    const t = await momentOf(ctx.db, all, comment)
    const link = `${ctx.config.publicUrl}/takes/${take.id}?t=${Number(t.toFixed(3))}`
    for (const m of to) {
      // Once per comment and person, whatever the edits (a mention removed and added again included).
      const first = await ctx.db
        .insertInto('comment_mention_mails')
        .values({ comment_id: comment.id, user_id: m.id })
        .onConflict((oc) => oc.doNothing())
        .returning('user_id')
        .executeTakeFirst()
      if (!first) continue
      try {
        await ctx.mailer.send(
          mentionMail(m.email, {
            author: author.name,
            takeTitle: take.title || take.filename,
            time: formatTakeTime(t),
            link,
            body: comment.body,
          }),
        )
      } catch (err) {
        console.error(
          `[mail] mention of ${m.email} in comment ${comment.id} on take ${take.id} was not delivered: ${(err as Error).message}`,
        )
      }
    }
  })().catch((err) => console.error(`[mail] mentions of comment ${comment.id} failed: ${(err as Error).message}`))
}

export async function createComment(
  ctx: AppContext,
  user: User,
  takeId: number,
  body: CreateCommentBody,
  opts: CommentOptions = {},
): Promise<Comment> {
  const take = await loadTake(ctx.db, takeId)
  const at = body.atSeconds ?? null
  if (at !== null && take.duration_seconds !== null && at > take.duration_seconds) {
    throw new AppError(400, 'OUT_OF_RANGE', `${at} s is after the end of the take (${take.duration_seconds} s)`, {
      atSeconds: at,
      durationSeconds: take.duration_seconds,
    })
  }
  const lowHz = body.lowHz ?? null
  const highHz = body.highHz ?? null
  const nyquist = take.sample_rate ? take.sample_rate / 2 : null
  if (highHz !== null && nyquist !== null && highHz > nyquist) {
    throw new AppError(
      400,
      'OUT_OF_RANGE',
      `${highHz} Hz is above the take's highest frequency (${nyquist} Hz, half its sample rate)`,
      {
        highHz,
        nyquistHz: nyquist,
      },
    )
  }
  const outcome = body.outcome ?? null
  const regionId = body.regionId ?? null
  const region = regionId !== null ? await findRegion(ctx.db, takeId, regionId) : undefined
  if (regionId !== null && !region)
    throw new AppError(400, 'REGION_NOT_FOUND', `Take ${takeId} has no region ${regionId}`, { regionId })
  const parentId = body.parentId ?? null
  if (parentId !== null) {
    const parent = await findComment(ctx.db, parentId)
    if (!parent || parent.take_id !== takeId) {
      throw new AppError(400, 'PARENT_NOT_FOUND', `Take ${takeId} has no comment ${parentId} to reply to`, { parentId })
    }
  }

  const id = await ctx.db.transaction().execute(async (trx) => {
    const { id } = await insertComment(trx, {
      take_id: takeId,
      author_id: user.id,
      body: body.body,
      at_seconds: at,
      low_hz: lowHz,
      high_hz: highHz,
      outcome,
      region_id: regionId,
      parent_id: parentId,
    })
    const all = toComments(await commentsOf(trx, takeId), [])
    const mine = all.find((c) => c.id === id)!
    if (parentId === null) {
      const where = at !== null ? ` at ${formatTakeTime(at)}` : region ? ` on region \u201c${region.name}\u201d` : ''
      const band = lowHz !== null && highHz !== null ? `, ${formatBand(lowHz, highHz)}` : ''
      const verdict = outcome ? ` (${outcome})` : ''
      await recordEvent(
        trx,
        takeId,
        user,
        'commented',
        `Note #${mine.number}${where}${band}${verdict}: \u201c${excerpt(body.body)}\u201d`,
      )
    } else {
      await recordEvent(
        trx,
        takeId,
        user,
        'replied',
        `Reply to note #${rootOf(all, mine).number}: \u201c${excerpt(body.body)}\u201d`,
      )
    }
    return id
  })

  const [rows, members] = await Promise.all([commentsOf(ctx.db, takeId), activeMembers(ctx.db)])
  const all = toComments(rows, members)
  const comment = all.find((c) => c.id === id)!
  if (opts.notify !== false) {
    void notifyMentions(ctx, take, comment, user, resolveMentions(comment.body, members), all)
  }
  return comment
}

/** "8.9–9.2 kHz", "50–120 Hz": a band as people read it. */
export function formatBand(lowHz: number, highHz: number): string {
  const k = highHz >= 1000
  const f = (hz: number) => (k ? (hz / 1000).toFixed(hz < 10000 ? 1 : 0) : String(Math.round(hz)))
  return `${f(lowHz)}\u2013${f(highHz)} ${k ? 'kHz' : 'Hz'}`
}

/** Text: the author only. Outcome, resolve and reopen: anyone who may comment. */
export async function editComment(
  ctx: AppContext,
  user: User,
  takeId: number,
  commentId: number,
  body: UpdateCommentBody,
): Promise<Comment> {
  const take = await loadTake(ctx.db, takeId)
  const row = await loadComment(ctx.db, takeId, commentId)
  const newText = body.body !== undefined && body.body !== row.body ? body.body : null
  if (newText !== null && row.author_id !== user.id)
    throw forbidden('Only the author can change the text of a comment; reply instead')

  const before = toComments(await commentsOf(ctx.db, takeId), [])
  const number = rootOf(
    before,
    before.find((c) => c.id === commentId)!,
  ).number
  const label = row.parent_id === null ? `note #${number}` : `a reply to note #${number}`
  if (body.outcome !== undefined && row.parent_id !== null) {
    throw new AppError(400, 'NOT_A_NOTE', 'A reply carries no outcome; set it on the note it answers', {
      parentId: row.parent_id,
    })
  }
  const newOutcome = body.outcome !== undefined && body.outcome !== row.outcome ? body.outcome : undefined
  await ctx.db.transaction().execute(async (trx) => {
    if (newText !== null) await updateComment(trx, commentId, { body: newText, edited_at: nowIso() })
    if (newOutcome !== undefined) {
      await updateComment(trx, commentId, { outcome: newOutcome })
      await recordEvent(
        trx,
        takeId,
        user,
        'outcome',
        newOutcome ? `Marked ${label} \u201c${newOutcome}\u201d` : `Cleared the outcome of ${label}`,
      )
    }
    if (body.resolved === true && row.resolved_at === null) {
      await updateComment(trx, commentId, { resolved_at: nowIso(), resolved_by: user.id })
      await recordEvent(trx, takeId, user, 'resolved', `Resolved ${label}`)
    }
    if (body.resolved === false && row.resolved_at !== null) {
      await updateComment(trx, commentId, { resolved_at: null, resolved_by: null })
      await recordEvent(trx, takeId, user, 'reopened', `Reopened ${label}`)
    }
  })

  const [rows, members] = await Promise.all([commentsOf(ctx.db, takeId), activeMembers(ctx.db)])
  const all = toComments(rows, members)
  const comment = all.find((c) => c.id === commentId)!
  if (newText !== null) {
    // Only people the edit newly mentions hear about it.
    const already = resolveMentions(row.body, members)
    const added = resolveMentions(newText, members).filter((m) => !already.includes(m))
    void notifyMentions(ctx, take, comment, user, added, all)
  }
  return comment
}
