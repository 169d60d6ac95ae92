import { IdParams } from '@shared/schemas/common'
import { CreateRegionBody, RegionParams, UpdateRegionBody } from '@shared/schemas/library'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import { createRegion, listRegions, patchRegion, removeRegion } from './regions.service'
import { coverRegionsLater } from '../similar/similar.service'

/** Named time ranges of a take. Everyone reads them; the own/any rule of take edits decides who changes them. */
export function registerRegionRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/takes/:id/regions', 'library:browse', async (req, res) => {
    res.json({ regions: await listRegions(ctx.db, params(req, IdParams).id) })
  })

  api.route('post', '/takes/:id/regions', 'takes:edit-own', async (req, res) => {
    const id = params(req, IdParams).id
    res.status(201).json({ region: await createRegion(ctx.db, req.user!, id, body(req, CreateRegionBody)) })
    // "More like this" names regions by their own sound: one between the analysis's excerpts needs frames read.
    coverRegionsLater(ctx, id)
  })

  api.route('patch', '/takes/:id/regions/:regionId', 'takes:edit-own', async (req, res) => {
    const p = params(req, RegionParams)
    res.json({ region: await patchRegion(ctx.db, req.user!, p.id, p.regionId, body(req, UpdateRegionBody)) })
    coverRegionsLater(ctx, p.id)
  })

  api.route('delete', '/takes/:id/regions/:regionId', 'takes:edit-own', async (req, res) => {
    const p = params(req, RegionParams)
    await removeRegion(ctx.db, req.user!, p.id, p.regionId)
    res.json({ ok: true })
  })
}
