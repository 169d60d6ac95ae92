// Removing takes: the "Removed" list, restoring, and the purge after 30 days.
// Field names are part of the public API.
import { z } from 'zod'

/** How long a removed take waits in the Removed list (audio kept, restorable) before it is purged with its files. */
export const REMOVAL_KEEP_DAYS = 30

const UserRef = z.object({ id: z.number().int(), name: z.string() })

export const RemovedTake = z.object({
  takeId: z.number().int(),
  filename: z.string(),
  title: z.string(),
  sessionId: z.number().int(),
  sessionTitle: z.string(),
  uploader: UserRef.nullable(),
  removedAt: z.string(),
  removedBy: UserRef.nullable(),
  /** When the purge sweep deletes it for good, with its audio and derived files. */
  purgeAfter: z.string(),
})
export type RemovedTake = z.infer<typeof RemovedTake>

/** GET /api/removed-takes: newest removal first; recordists see the takes they uploaded, designers and admins every one. */
export const RemovedTakesResponse = z.object({ takes: z.array(RemovedTake) })
/** DELETE /api/takes/:id answers the removal. */
export const RemoveTakeResponse = z.object({ removed: RemovedTake })
