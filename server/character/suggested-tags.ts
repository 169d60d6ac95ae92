// Suggested character tags: the analysis's tags at or above SUGGEST_FROM that the
// take does not carry yet. Accepting moves them into the take's tags (one
// transaction, one history entry per take changed).
import type { User } from '@shared/schemas/auth'
import { AcceptSuggestedBody, SUGGEST_FROM, type AcceptSuggestedResult } from '@shared/schemas/character'
import { TAGS_PER_TAKE } from '@shared/schemas/library'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import type { Api } from '../core/routes'
import { body } from '../core/validate'
import { findTakesByIds, mayEditTake, missingTakeIds, recordEvent, replaceTags } from '../takes/takes.service'

export async function acceptSuggested(
  ctx: AppContext,
  user: User,
  req: AcceptSuggestedBody,
): Promise<AcceptSuggestedResult> {
  const ids = [...new Set(req.takeIds)]
  const missing = await missingTakeIds(ctx.db, ids)
  if (missing.length)
    throw new AppError(404, 'TAKE_NOT_FOUND', `No take with id ${missing.join(', ')}; nothing was changed`, {
      missingIds: missing,
    })
  const result: AcceptSuggestedResult = { updated: [], added: 0, skipped: [] }
  await ctx.db.transaction().execute(async (trx) => {
    for (const row of await findTakesByIds(trx, ids)) {
      if (!mayEditTake(user, row)) {
        result.skipped.push(row.id)
        continue
      }
      const current = (await trx.selectFrom('take_tags').select('tag').where('take_id', '=', row.id).execute()).map(
        (r) => r.tag,
      )
      const stored = await trx
        .selectFrom('take_character')
        .select(['tag', 'confidence'])
        .where('take_id', '=', row.id)
        .where('confidence', '>=', SUGGEST_FROM)
        .orderBy('confidence', 'desc')
        .execute()
      const room = Math.max(0, TAGS_PER_TAKE - current.length)
      const add = stored
        .map((s) => s.tag)
        .filter((t) => !current.includes(t) && (!req.tags || req.tags.includes(t as never)))
        .slice(0, room)
      if (add.length === 0) continue
      await replaceTags(trx, row.id, [...current, ...add])
      await recordEvent(trx, row.id, user, 'tagged', `Tags added from suggestions: ${add.join(', ')}`)
      result.updated.push(row.id)
      result.added += add.length
    }
  })
  return result
}

export function registerSuggestedTagRoutes(api: Api, ctx: AppContext) {
  /** Moves suggested character tags into the takes' tags; takes the caller may not edit are skipped and named. */
  api.route('post', '/takes/suggested-tags/accept', 'takes:edit-own', async (req, res) => {
    res.json(await acceptSuggested(ctx, req.user!, body(req, AcceptSuggestedBody)))
  })
}
