// The library around a take: edits, bulk edits, tag and state suggestions,
// history, regions and comments. Field names are part of the public API.
import { z } from 'zod'
import { Id, longEnough, TOO_SHORT_MESSAGE } from './common'
import { NoteOutcome } from './notes'
import { TakeSourceLink } from './sources'
import { Take } from './takes'

const text = (max: number) => z.string().trim().max(max, `Use at most ${max} characters`)
const seconds = z.number().finite().min(0, 'Times start at 0 seconds')

export const UserRef = z.object({ id: z.number().int(), name: z.string() })
export type UserRef = z.infer<typeof UserRef>

// ---- tags ----

export const TAG_MAX_LENGTH = 40
export const TAGS_PER_TAKE = 30

/** The one spelling of a tag: Unicode-compatible form, trimmed, lower-case, runs of spaces made one. */
export function normalizeTag(raw: string): string {
  return raw.normalize('NFKC').trim().toLowerCase().replace(/\s+/gu, ' ')
}

export const Tag = z
  .string()
  .max(200)
  .transform(normalizeTag)
  .pipe(
    z.string().min(1, 'A tag cannot be empty').max(TAG_MAX_LENGTH, `A tag has at most ${TAG_MAX_LENGTH} characters`),
  )

/** Tags as typed: normalised, duplicates dropped (first spelling kept), at most 30. */
export const TagList = z
  .array(Tag)
  .max(200)
  .transform((tags) => [...new Set(tags)])
  .pipe(z.array(z.string()).max(TAGS_PER_TAKE, `A take has at most ${TAGS_PER_TAKE} tags`))

const SourceLinks = z
  .array(TakeSourceLink)
  .max(20, 'Link at most 20 devices')
  .refine((links) => new Set(links.map((l) => l.sourceId)).size === links.length, 'Each device can be linked once')

// ---- editing one take ----

/** PATCH /api/takes/:id. Every field is optional; tags and sources replace the current lists. */
export const UpdateTakeBody = z.object({
  title: text(200).min(1, 'Give the take a title').optional(),
  description: text(4000).optional(),
  notes: text(10000).optional(),
  tags: TagList.optional(),
  sources: SourceLinks.optional(),
})
export type UpdateTakeBody = z.infer<typeof UpdateTakeBody>
export type UpdateTakeInput = z.input<typeof UpdateTakeBody>

export const TakeResponse = z.object({ take: Take })

// ---- bulk edits ----

export const BULK_MAX = 1000

/** POST /api/takes/bulk: one transaction over many takes. */
export const BulkEditBody = z
  .object({
    ids: z
      .array(Id)
      .min(1, 'Choose at least one take')
      .max(BULK_MAX, `Edit at most ${BULK_MAX} takes at once`)
      .transform((ids) => [...new Set(ids)]),
    addTags: TagList.optional(),
    removeTags: TagList.optional(),
    /** Replaces each take's device links with this list. */
    sources: SourceLinks.optional(),
    /** Moves the takes to this capture session. */
    sessionId: Id.optional(),
  })
  .refine((b) => b.addTags?.length || b.removeTags?.length || b.sources !== undefined || b.sessionId !== undefined, {
    message: 'Say what to change: addTags, removeTags, sources or sessionId',
  })
  .refine((b) => !(b.addTags ?? []).some((t) => (b.removeTags ?? []).includes(t)), {
    message: 'A tag cannot be added and removed at once',
    path: ['removeTags'],
  })
export type BulkEditBody = z.infer<typeof BulkEditBody>

export const BulkEditResponse = z.object({
  /** How many takes actually changed. */
  updated: z.number().int(),
  /** Every take named in `ids`, as it is now (without the file's own metadata, like library lists). */
  takes: z.array(Take),
})
export type BulkEditResponse = z.infer<typeof BulkEditResponse>

// ---- suggestions ----

const limit = z.coerce.number().int().min(1).max(500).default(50)

export const TagsQuery = z.object({ q: z.string().max(200).optional(), limit })
export const TagSuggestion = z.object({ tag: z.string(), count: z.number().int() })
export const TagsResponse = z.object({ tags: z.array(TagSuggestion) })
export type TagSuggestion = z.infer<typeof TagSuggestion>

export const StatesQuery = z.object({ sourceId: Id.optional(), q: z.string().max(200).optional(), limit })
export const StateSuggestion = z.object({ state: z.string(), count: z.number().int() })
export const StatesResponse = z.object({ states: z.array(StateSuggestion) })
export type StateSuggestion = z.infer<typeof StateSuggestion>

// ---- history ----

export const HISTORY_KINDS = [
  'uploaded',
  'measured',
  'failed',
  'requeued',
  'edited',
  'tagged',
  'sources',
  'moved',
  'commented',
  'replied',
  'resolved',
  'reopened',
  'outcome',
  'region-added',
  'region-changed',
  'region-removed',
  'split',
  'removed',
  'restored',
] as const
export type HistoryKind = (typeof HISTORY_KINDS)[number]

export const HistoryEvent = z.object({
  id: z.number().int(),
  /** One of HISTORY_KINDS (kept a string so older clients read newer kinds). */
  kind: z.string(),
  summary: z.string(),
  user: UserRef.nullable(),
  createdAt: z.string(),
})
export type HistoryEvent = z.infer<typeof HistoryEvent>
/** Newest first. */
export const HistoryResponse = z.object({ events: z.array(HistoryEvent) })

// ---- regions ----

export const RegionParams = z.object({ id: Id, regionId: Id })

/** What a region is for as an instrument part; null: a plain named range. */
export const RegionKind = z.enum(['one-shot', 'loop', 'drone'])
export type RegionKind = z.infer<typeof RegionKind>

export const Region = z.object({
  id: z.number().int(),
  takeId: z.number().int(),
  name: z.string(),
  startSeconds: z.number(),
  endSeconds: z.number(),
  kind: RegionKind.nullable(),
  createdBy: UserRef.nullable(),
  createdAt: z.string(),
  updatedAt: z.string(),
})
export type Region = z.infer<typeof Region>

const regionName = text(120).min(1, 'Give the region a name')

export const CreateRegionBody = z
  .object({ name: regionName, startSeconds: seconds, endSeconds: seconds, kind: RegionKind.nullable().optional() })
  .refine((r) => r.startSeconds < r.endSeconds, { message: 'A region ends after it starts', path: ['endSeconds'] })
  .refine((r) => r.startSeconds >= r.endSeconds || longEnough(r.startSeconds, r.endSeconds), {
    message: TOO_SHORT_MESSAGE,
    path: ['endSeconds'],
  })
export type CreateRegionBody = z.infer<typeof CreateRegionBody>

/** The result must still satisfy 0 ≤ start < end ≤ duration; the server checks it against the stored region. */
export const UpdateRegionBody = z.object({
  name: regionName.optional(),
  kind: RegionKind.nullable().optional(),
  startSeconds: seconds.optional(),
  endSeconds: seconds.optional(),
})
export type UpdateRegionBody = z.infer<typeof UpdateRegionBody>

/** Sorted by start time. */
export const RegionsResponse = z.object({ regions: z.array(Region) })
/** POST (201) and PATCH answers. */
export const RegionResponse = z.object({ region: Region })

// ---- comments ----

export const COMMENT_MAX_LENGTH = 4000

export const CommentParams = z.object({ id: Id, commentId: Id })

export const Comment = z.object({
  id: z.number().int(),
  takeId: z.number().int(),
  /** null for a top-level comment; the comment replied to otherwise. */
  parentId: z.number().int().nullable(),
  /** 1-based position among the take's top-level comments in time order (the marker's number); null for replies. */
  number: z.number().int().nullable(),
  author: UserRef.nullable(),
  /** Plain text exactly as written. Render it as text, never as HTML. */
  body: z.string(),
  atSeconds: z.number().nullable(),
  /** The frequency band the note is pinned to on the spectrogram (both or neither), in Hz. */
  lowHz: z.number().nullable(),
  highHz: z.number().nullable(),
  /** The trade outcome of a top-level note (keep, trim, re-take, reject); null when none was given. */
  outcome: NoteOutcome.nullable(),
  regionId: z.number().int().nullable(),
  /** Kept for older clients; the bench shows outcomes instead. */
  resolved: z.boolean(),
  resolvedAt: z.string().nullable(),
  resolvedBy: UserRef.nullable(),
  createdAt: z.string(),
  editedAt: z.string().nullable(),
  /** Active team members the body mentions (see mentionHandles), in the order they appear. */
  mentions: z.array(UserRef),
})
export type Comment = z.infer<typeof Comment>

/** In time order; threads are rebuilt from parentId. */
export const CommentsResponse = z.object({ comments: z.array(Comment) })
/** POST (201) and PATCH answers. */
export const CommentResponse = z.object({ comment: Comment })

const commentBody = z
  .string()
  .max(COMMENT_MAX_LENGTH, `A comment has at most ${COMMENT_MAX_LENGTH} characters`)
  .refine((s) => s.trim().length > 0, 'Write something first')

/** Stored byte for byte: the body is not trimmed, escaped or otherwise changed. */
const hertz = z.number().finite().min(0, 'Frequencies start at 0 Hz')

/** A band needs both edges, low below high; it is checked against the take's Nyquist frequency on the server. */
const bandRule = <T extends { lowHz?: number | null; highHz?: number | null }>(b: T) =>
  (b.lowHz === undefined || b.lowHz === null) === (b.highHz === undefined || b.highHz === null) &&
  (b.lowHz == null || b.lowHz < b.highHz!)

export const CreateCommentBody = z
  .object({
    body: commentBody,
    atSeconds: seconds.nullish(),
    lowHz: hertz.nullish(),
    highHz: hertz.nullish(),
    outcome: NoteOutcome.nullish(),
    regionId: Id.nullish(),
    parentId: Id.nullish(),
  })
  .refine(bandRule, { message: 'Give a band as lowHz and highHz together, low below high', path: ['highHz'] })
  .refine((b) => (b.lowHz == null && b.outcome == null) || b.parentId == null, {
    message: 'A reply carries no band and no outcome; set them on the note it answers',
    path: ['parentId'],
  })
export type CreateCommentBody = z.infer<typeof CreateCommentBody>

/** outcome: null clears it. */
export const UpdateCommentBody = z
  .object({
    body: commentBody.optional(),
    resolved: z.boolean().optional(),
    outcome: NoteOutcome.nullable().optional(),
  })
  .refine(
    (b) => b.body !== undefined || b.resolved !== undefined || b.outcome !== undefined,
    'Send body, outcome or resolved',
  )
export type UpdateCommentBody = z.infer<typeof UpdateCommentBody>

// ---- @mentions ----
//
// The rule, case- and accent-insensitive:
//   A mention is `@` followed by a handle of letters and digits, which may hold
//   `.`, `_` or `-` inside (not at the end: "@dana." at a sentence's end is "@dana").
//   The `@` must start the text or follow a character that cannot be part of an
//   e-mail address, so "dana@example.test" mentions nobody.
//   Handle and names are compared with accents, case and every character other
//   than letters and digits removed ("@Dana.Humbucker" = "@danahumbucker").
//   A handle names an active team member when it equals
//     - the member's full name  ("@DanaHumbucker", "@dana.humbucker", "@dana_humbucker"),
//     - the local part of their e-mail address ("@designer" for designer@example.test), or
//     - their first name ("@dana"), only while no other active member shares it.

/** Letters and digits only, accents removed, lower-case: the form handles and names are compared in. */
export function mentionKey(s: string): string {
  return s
    .normalize('NFKD')
    .replace(/\p{M}/gu, '')
    .toLowerCase()
    .replace(/[^\p{L}\p{N}]/gu, '')
}

const MENTION = /(^|[^\p{L}\p{N}._%+@-])@([\p{L}\p{N}](?:[\p{L}\p{N}._-]*[\p{L}\p{N}])?)/gu

/** Every `@handle` of a text with its position (index of the `@`) and length (with the `@`). */
export function mentionHandles(body: string): { handle: string; index: number; length: number }[] {
  const out: { handle: string; index: number; length: number }[] = []
  for (const m of body.matchAll(MENTION)) {
    out.push({ handle: m[2], index: m.index! + m[1].length, length: m[2].length + 1 })
  }
  return out
}

export interface MentionCandidate {
  id: number
  name: string
  email: string
}

/** The members a text mentions by the rule above, each once, in order of first mention. */
export function resolveMentions<T extends MentionCandidate>(body: string, members: T[]): T[] {
  const handles = mentionHandles(body)
  if (!handles.length) return []
  const firstNameCount = new Map<string, number>()
  const firstKey = (m: T) => mentionKey(m.name.trim().split(/\s+/u)[0] ?? '')
  for (const m of members) firstNameCount.set(firstKey(m), (firstNameCount.get(firstKey(m)) ?? 0) + 1)
  const found: T[] = []
  for (const { handle } of handles) {
    const key = mentionKey(handle)
    if (!key) continue
    for (const m of members) {
      const hit =
        key === mentionKey(m.name) ||
        key === mentionKey(m.email.split('@')[0] ?? '') ||
        (key === firstKey(m) && firstNameCount.get(key) === 1)
      if (hit && !found.includes(m)) found.push(m)
    }
  }
  return found
}

// ---- times ----

/** A time in a take as people read it: "0:07.5", "12:03.0", "1:02:03.0" (tenths of a second). */
export function formatTakeTime(seconds: number): string {
  const tenths = Math.round(Math.max(0, seconds) * 10)
  const h = Math.floor(tenths / 36000)
  const m = Math.floor((tenths % 36000) / 600)
  const s = (tenths % 600) / 10
  const ss = s.toFixed(1).padStart(4, '0')
  return h ? `${h}:${String(m).padStart(2, '0')}:${ss}` : `${m}:${ss}`
}
