import { IdParams } from '@shared/schemas/common'
import { SimilarQuery } from '@shared/schemas/similar'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { params, query } from '../core/validate'
import { similarTakes } from './similar.service'

export function registerSimilarRoutes(api: Api, ctx: AppContext) {
  /** Takes that sound like this one, nearest first; removed takes are never offered. */
  api.route('get', '/takes/:id/similar', 'library:browse', async (req, res) => {
    const { id } = params(req, IdParams)
    const { limit } = query(req, SimilarQuery)
    res.json({ items: await similarTakes(ctx, id, limit) })
  })
}
