import { z } from 'zod'

/** Route parameter `:id` and any integer id in a query. */
export const Id = z.coerce.number().int().positive()
export const IdParams = z.object({ id: Id })
export type IdParams = z.infer<typeof IdParams>

export const TokenParams = z.object({ token: z.string().min(16).max(200) })

/** The one error shape every API answer uses. */
export const ApiErrorBody = z.object({
  error: z.object({
    code: z.string(),
    message: z.string(),
    details: z.record(z.string(), z.unknown()).optional(),
  }),
})
export type ApiErrorBody = z.infer<typeof ApiErrorBody>

export const Email = z.string().trim().toLowerCase().email('Enter a valid e-mail address').max(254)
export const PASSWORD_MIN = 10
export const Password = z
  .string()
  .min(PASSWORD_MIN, `Use at least ${PASSWORD_MIN} characters`)
  .max(200, 'Use at most 200 characters')

export function paged<T extends z.ZodTypeAny>(item: T) {
  return z.object({ items: z.array(item), total: z.number().int(), page: z.number().int(), pageSize: z.number().int() })
}

/**
 * Shortest region, pack item or exported selection, in seconds. 20 ms is common practice for the
 * shortest useful one-shot: shorter plays as a click rather than a sound, and leaves no room for the
 * render's fades (5 ms in and out by default). Integrated loudness needs more still (one 400 ms
 * gating block, ITU-R BS.1770-4), so items between this and 0.4 s show "too short to measure".
 */
export const MIN_SELECTION_SECONDS = 0.02
export const MIN_SELECTION_MS = Math.round(MIN_SELECTION_SECONDS * 1000)
/** Times travel rounded to the millisecond: 17.820 − 17.800 must count as 20 ms. */
export const longEnough = (start: number, end: number) => end - start >= MIN_SELECTION_SECONDS - 1e-6
export const TOO_SHORT_MESSAGE = `A selection must be at least ${MIN_SELECTION_MS} ms long; shorter plays as a click, not a sound`

/** Control characters (C0, DEL, C1: CR, LF, tab, escape…), which no name may hold. */
export const CONTROL_CHARS = /\p{Cc}/u
export const noControlChars = (s: string) => !CONTROL_CHARS.test(s)
/** A one-line name: trimmed, 1..max characters, no control characters. */
export const NameText = (max: number, emptyMessage: string) =>
  z
    .string()
    .trim()
    .min(1, emptyMessage)
    .max(max, `Use at most ${max} characters`)
    .refine(noControlChars, 'Use no line breaks, tabs or other control characters')

/** Longest uploaded file name kept, in characters (the common file-system limit). */
export const MAX_FILE_NAME = 255

/**
 * An uploaded file's name as kept: control characters become spaces, and a name longer than
 * MAX_FILE_NAME is shortened before its extension.
 */
export function cleanFileName(name: string): string {
  const clean =
    name
      .replace(/\p{Cc}+/gu, ' ')
      .replace(/\s+/g, ' ')
      .trim() || 'take.wav'
  const chars = [...clean]
  if (chars.length <= MAX_FILE_NAME) return clean
  const ext = /\.[A-Za-z0-9]{1,8}$/.exec(clean)?.[0] ?? ''
  return (
    chars
      .slice(0, MAX_FILE_NAME - ext.length)
      .join('')
      .trimEnd() + ext
  )
}
