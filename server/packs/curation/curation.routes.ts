import { stat } from 'node:fs/promises'
import { z } from 'zod'
import { Id, IdParams } from '@shared/schemas/common'
import {
  AddItemBody,
  AddItemsBody,
  CreatePackBody,
  NamingPreviewQuery,
  QuickExportQuery,
  ReorderItemsBody,
  UpdateItemBody,
  UpdatePackBody,
} from '@shared/schemas/packs'
import type { AppContext } from '../../core/context'
import type { Api } from '../../core/routes'
import { body, params, query } from '../../core/validate'
import { deletePackAndBuilds } from '../builds/builds.service'
import { newestPublished, publishedItemNotFound } from '../builds/published'
import { sendBuildItem } from '../delivery/send-build-item'
import { sendWithRanges } from '../delivery/send-with-ranges'
import * as repo from '../packs.repository'
import {
  addItems,
  createPack,
  exportSpec,
  itemNotFound,
  itemSpecs,
  managesPacks,
  namingPreview,
  packDetail,
  packsToApi,
  removeItem,
  reorderItems,
  updateItem,
  updatePackFields,
  visiblePack,
} from './packs.service'
import { renderedPreview } from './preview'

const ItemParams = z.object({ id: Id, itemId: Id })

/** Putting packs together: the packs, their items, and auditions of items as a build would render them. */
export function registerCurationRoutes(api: Api, ctx: AppContext) {
  packRoutes(api, ctx)
  itemRoutes(api, ctx)
  auditionRoutes(api, ctx)
}

function packRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/packs', 'packs:receive', async (req, res) => {
    const rows = await repo.listPacks(ctx.db, !managesPacks(req.user!))
    res.json({ packs: await packsToApi(ctx, req.user!, rows) })
  })

  api.route('post', '/packs', 'packs:manage', async (req, res) => {
    res.status(201).json({ pack: await createPack(ctx, req.user!, body(req, CreatePackBody)) })
  })

  api.route('get', '/packs/:id', 'packs:receive', async (req, res) => {
    const pack = await visiblePack(ctx.db, req.user!, params(req, IdParams).id)
    res.json({ pack: await packDetail(ctx, req.user!, pack) })
  })

  api.route('patch', '/packs/:id', 'packs:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    res.json({ pack: await updatePackFields(ctx, req.user!, id, body(req, UpdatePackBody)) })
  })

  api.route('delete', '/packs/:id', 'packs:manage', async (req, res) => {
    await deletePackAndBuilds(ctx, params(req, IdParams).id)
    res.status(204).end()
  })
}

function itemRoutes(api: Api, ctx: AppContext) {
  api.route('post', '/packs/:id/items', 'packs:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    const [item] = await addItems(ctx, req.user!, id, [body(req, AddItemBody)])
    res.status(201).json({ item })
  })

  /** Many at once ("add to a pack" from a library selection): all or none. */
  api.route('post', '/packs/:id/items/batch', 'packs:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    res.status(201).json({ items: await addItems(ctx, req.user!, id, body(req, AddItemsBody).items) })
  })

  /** The output names a naming template would give the pack's items, for the live preview while it is typed. */
  api.route('get', '/packs/:id/naming-preview', 'packs:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    res.json(await namingPreview(ctx, id, query(req, NamingPreviewQuery)))
  })

  api.route('put', '/packs/:id/items/order', 'packs:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    res.json({ items: await reorderItems(ctx, id, body(req, ReorderItemsBody).itemIds) })
  })

  api.route('patch', '/packs/:id/items/:itemId', 'packs:manage', async (req, res) => {
    const { id, itemId } = params(req, ItemParams)
    res.json({ item: await updateItem(ctx, id, itemId, body(req, UpdateItemBody), `user:${req.user!.id}`) })
  })

  api.route('delete', '/packs/:id/items/:itemId', 'packs:manage', async (req, res) => {
    const { id, itemId } = params(req, ItemParams)
    await removeItem(ctx, id, itemId)
    res.status(204).end()
  })
}

function auditionRoutes(api: Api, ctx: AppContext) {
  /** The item rendered as a build would render it, for the player (Range supported). */
  api.route('get', '/packs/:id/items/:itemId/preview', 'packs:receive', async (req, res, next) => {
    const { id, itemId } = params(req, ItemParams)
    const pack = await visiblePack(ctx.db, req.user!, id)
    // Those who do not manage packs hear the newest published version itself, out of its zip: nothing unpublished.
    if (!managesPacks(req.user!))
      return sendBuildItem(
        ctx,
        res,
        next,
        (await newestPublished(ctx.db, id)) ?? raise(publishedItemNotFound()),
        itemId,
        'inline',
      )
    const rows = await repo.itemsOf(ctx.db, id)
    const found = (await itemSpecs(ctx.db, pack, rows)).find((s) => s.row.id === itemId)
    if (!found) throw itemNotFound()
    const file = await renderedPreview(
      ctx,
      found.spec,
      `SF-P${pack.id}-preview-${found.spec.position}`,
      `user:${req.user!.id}`,
    )
    const size = (await stat(file)).size
    res.set('Content-Disposition', `inline; filename="${found.spec.fileName}"`)
    sendWithRanges(res, next, file, size, { contentType: 'audio/wav', cache: 'private, max-age=300' })
  })

  /** A take or a range of it rendered with a pack's settings (or the defaults), as one WAV download. */
  api.route('get', '/takes/:id/export', 'packs:manage', async (req, res, next) => {
    const { id } = params(req, IdParams)
    const spec = await exportSpec(ctx, id, query(req, QuickExportQuery), `user:${req.user!.id}`)
    const file = await renderedPreview(ctx, spec, `SF-T${id}-export`, `user:${req.user!.id}`)
    const size = (await stat(file)).size
    sendWithRanges(res, next, file, size, {
      contentType: 'audio/wav',
      downloadName: spec.fileName,
      cache: 'private, no-cache',
    })
  })
}

const raise = (err: Error): never => {
  throw err
}
