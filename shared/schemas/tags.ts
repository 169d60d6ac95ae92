// The tag manager (designers): every tag with its count, renaming one tag and
// merging several into one. Field names are part of the public API.
import { z } from 'zod'
import { Tag } from './library'

/** GET /api/tags/all: every tag in use, with how many takes carry it, A to Z. */
export const TagCount = z.object({ tag: z.string(), count: z.number().int() })
export type TagCount = z.infer<typeof TagCount>
export const AllTagsResponse = z.object({ tags: z.array(TagCount) })
export type AllTagsResponse = z.infer<typeof AllTagsResponse>

/** POST /api/tags/rename: `from` becomes `to` on every take; when `to` is in use already, the two merge. */
export const RenameTagBody = z
  .object({ from: Tag, to: Tag })
  .refine((b) => b.from !== b.to, { message: 'The new name is the same as the old one', path: ['to'] })
export type RenameTagBody = z.infer<typeof RenameTagBody>

/** POST /api/tags/merge: every tag of `tags` becomes `into` (which may be one of them or a new name). */
export const MergeTagsBody = z
  .object({
    tags: z
      .array(Tag)
      .min(1, 'Choose the tags to merge')
      .max(50, 'Merge at most 50 tags at once')
      .transform((t) => [...new Set(t)]),
    into: Tag,
  })
  .refine((b) => b.tags.some((t) => t !== b.into), {
    message: 'Choose at least one tag other than the one merged into',
    path: ['tags'],
  })
export type MergeTagsBody = z.infer<typeof MergeTagsBody>

/** The answer to a rename or a merge. */
export const TagChangeResponse = z.object({
  into: z.string(),
  /** Takes whose tags changed (each got one history entry). */
  takes: z.number().int(),
  /** The tags as they are now. */
  tags: z.array(TagCount),
})
export type TagChangeResponse = z.infer<typeof TagChangeResponse>
