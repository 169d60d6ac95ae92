// The @-picker of the comment box and the preview of who a comment will notify.
// The mention rule itself lives in ./library (mentionHandles, resolveMentions).
import { z } from 'zod'
import { UserRef } from './library'

/** GET /api/mentions/members: active team members as the @-picker offers them. */
export const MentionMember = UserRef.extend({
  /** What the picker writes after "@": the full name with its words joined by dots ("Dana.Humbucker"). */
  handle: z.string(),
})
export type MentionMember = z.infer<typeof MentionMember>
export const MentionMembersResponse = z.object({ members: z.array(MentionMember) })

/** POST /api/mentions/preview: who a comment body would notify, by the server's own rule. */
export const MentionPreviewBody = z.object({ body: z.string().max(4000) })
export const MentionPreviewResponse = z.object({
  notified: z.array(UserRef),
  /** Handles written after "@" that name nobody; they stay plain text. */
  unmatched: z.array(z.string()),
})
export type MentionPreviewResponse = z.infer<typeof MentionPreviewResponse>
