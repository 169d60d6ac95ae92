import { IdParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { params } from '../core/validate'
import { listRemoved, removeTake, restoreTake } from './takes.removal'

export function registerTakeRemovalRoutes(api: Api, ctx: AppContext) {
  /** Into the Removed list for 30 days (audio kept); 409 TAKE_PUBLISHED when a published pack version holds it. */
  api.route('delete', '/takes/:id', 'takes:edit-own', async (req, res) => {
    res.json({ removed: await removeTake(ctx.db, req.user!, params(req, IdParams).id) })
  })

  api.route('post', '/takes/:id/restore', 'takes:edit-own', async (req, res) => {
    await restoreTake(ctx.db, req.user!, params(req, IdParams).id)
    res.json({ ok: true })
  })

  api.route('get', '/removed-takes', 'takes:edit-own', async (req, res) => {
    res.json({ takes: await listRemoved(ctx.db, req.user!) })
  })
}
