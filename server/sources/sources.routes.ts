import { CreateSourceBody, UpdateSourceBody } from '@shared/schemas/sources'
import { IdParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import { createSource, deleteSource, getSource, listSources, updateSource } from './sources.service'

export function registerSourceRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/sources', 'library:browse', async (_req, res) => {
    res.json({ sources: await listSources(ctx.db) })
  })
  api.route('get', '/sources/:id', 'library:browse', async (req, res) => {
    res.json({ source: await getSource(ctx.db, params(req, IdParams).id) })
  })
  /** Recordists add devices where they log takes; editing and removing stays with 'sources:manage'. */
  api.route('post', '/sources', 'sources:create', async (req, res) => {
    res.status(201).json({ source: await createSource(ctx.db, req.user!, body(req, CreateSourceBody)) })
  })
  api.route('patch', '/sources/:id', 'sources:manage', async (req, res) => {
    res.json({ source: await updateSource(ctx.db, params(req, IdParams).id, body(req, UpdateSourceBody)) })
  })
  api.route('delete', '/sources/:id', 'sources:manage', async (req, res) => {
    await ctx.db.transaction().execute((trx) => deleteSource(trx, params(req, IdParams).id))
    res.json({ ok: true })
  })
}
