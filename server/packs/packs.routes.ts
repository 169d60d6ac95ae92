import { stat } from 'node:fs/promises'
import type { NextFunction, Response } from 'express'
import { z } from 'zod'
import { Id, IdParams, TokenParams } from '@shared/schemas/common'
import {
  AddItemBody,
  AddItemsBody,
  CreatePackBody,
  CreateShareLinkBody,
  NamingPreviewQuery,
  PublishBuildBody,
  QuickExportQuery,
  ReorderItemsBody,
  UpdateItemBody,
  UpdatePackBody,
} from '@shared/schemas/packs'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params, query } from '../core/validate'
import * as repo from './packs.repository'
import {
  addItems,
  createPack,
  exportSpec,
  itemNotFound,
  itemSpecs,
  managesPacks,
  packDetail,
  packsToApi,
  removeItem,
  reorderItems,
  updateItem,
  updatePackFields,
  visiblePack,
} from './curation/packs.service'
import {
  buildChanges,
  buildZip,
  deletePackAndBuilds,
  listBuilds,
  publishBuild,
  requestBuild,
  visibleBuild,
} from './builds/builds.service'
import { buildToApi } from './builds/builds.mapper'
import { buildFileName } from './curation/naming'
import { renderedPreview } from './curation/preview'
import {
  createShareLink,
  listShareLinks,
  revokeShareLink,
  shareDownload,
  shareHead,
  shareInfo,
  shareItemBuild,
} from './delivery/share.service'
import { CONDITIONAL_HEADERS } from './delivery/share-ranges'
import { newestPublished, publishedItemNotFound, sendBuildItem } from './builds/published'
import { namingPreview } from './curation/packs.service'

const ItemParams = z.object({ id: Id, itemId: Id })
const ShareItemParams = TokenParams.extend({ itemId: Id })

interface SendOptions {
  contentType: string
  /** Set: Content-Disposition attachment with this name. */
  downloadName?: string
  cache: string
}

/**
 * Sends a file through Express's send: Content-Length, Accept-Ranges, 206 for a satisfiable
 * Range, and a 416 in the API's error shape with Content-Range: bytes * /size otherwise.
 */
function sendWithRanges(res: Response, next: NextFunction, file: string, size: number, o: SendOptions): void {
  const opts = { acceptRanges: true, headers: { 'Content-Type': o.contentType, 'Cache-Control': o.cache } }
  const done = (err?: Error & { status?: number }) => {
    if (!err || res.headersSent) return
    if (err.status === 416) {
      // send set the file's headers before it looked at the range: take them back.
      for (const h of ['Content-Disposition', 'Content-Type', 'ETag', 'Last-Modified']) res.removeHeader(h)
      res
        .status(416)
        .set('Content-Range', `bytes */${size}`)
        .json({
          error: {
            code: 'RANGE_NOT_SATISFIABLE',
            message: `The requested range lies outside the file's ${size} bytes`,
            details: { sizeBytes: size },
          },
        })
      return
    }
    next(err)
  }
  if (o.downloadName) res.download(file, o.downloadName, opts, done)
  else res.sendFile(file, opts, done)
}

export function registerPackRoutes(api: Api, ctx: AppContext) {
  // ---- packs ----

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

  // ---- items ----

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

  // ---- builds ----

  api.route('post', '/packs/:id/builds', 'packs:manage', async (req, res) => {
    res.status(202).json({ build: await requestBuild(ctx, req.user!, params(req, IdParams).id) })
  })

  api.route('get', '/packs/:id/builds', 'packs:receive', async (req, res) => {
    res.json({ builds: await listBuilds(ctx, req.user!, params(req, IdParams).id) })
  })

  api.route('get', '/pack-builds/:id', 'packs:receive', async (req, res) => {
    res.json({ build: buildToApi(await visibleBuild(ctx, req.user!, params(req, IdParams).id)) })
  })

  api.route('get', '/pack-builds/:id/download', 'packs:receive', async (req, res, next) => {
    const { path, build } = await buildZip(ctx, req.user!, params(req, IdParams).id)
    sendWithRanges(res, next, path, build.size_bytes ?? 0, {
      contentType: 'application/zip',
      downloadName: buildFileName(build.pack_name, build.version),
      cache: 'private, no-cache',
    })
  })

  api.route('post', '/pack-builds/:id/publish', 'packs:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    res.json({ build: await publishBuild(ctx, req.user!, id, body(req, PublishBuildBody).note) })
  })

  /** The starting text of the "what changed" note: items added, removed, renamed and re-rendered since the last published version. */
  api.route('get', '/pack-builds/:id/changes', 'packs:manage', async (req, res) => {
    res.json({ changes: await buildChanges(ctx, params(req, IdParams).id) })
  })

  // One item of a build, straight out of its zip (not counted anywhere; the zip is what producers download whole).
  for (const [suffix, how] of [
    ['audio', 'inline'],
    ['download', 'attachment'],
  ] as const) {
    api.route('get', `/pack-builds/:id/items/:itemId/${suffix}`, 'packs:receive', async (req, res, next) => {
      const { id, itemId } = params(req, ItemParams)
      await sendBuildItem(ctx, res, next, await visibleBuild(ctx, req.user!, id), itemId, how)
    })
  }

  // ---- followers ----

  const followAnswer = async (packId: number, userId: number) => {
    const [f] = await repo.followInfo(ctx.db, [packId], userId)
    return { following: Number(f?.mine ?? 0) === 1, followerCount: Number(f?.count ?? 0) }
  }

  api.route('post', '/packs/:id/follow', 'packs:receive', async (req, res) => {
    const pack = await visiblePack(ctx.db, req.user!, params(req, IdParams).id)
    await repo.follow(ctx.db, pack.id, req.user!.id)
    res.json(await followAnswer(pack.id, req.user!.id))
  })

  api.route('delete', '/packs/:id/follow', 'packs:receive', async (req, res) => {
    const pack = await visiblePack(ctx.db, req.user!, params(req, IdParams).id)
    await repo.unfollow(ctx.db, pack.id, req.user!.id)
    res.json(await followAnswer(pack.id, req.user!.id))
  })

  // ---- share links ----

  api.route('post', '/pack-builds/:id/share-links', 'packs:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    res.status(201).json({ link: await createShareLink(ctx, req.user!, id, body(req, CreateShareLinkBody)) })
  })

  api.route('get', '/pack-builds/:id/share-links', 'packs:manage', async (req, res) => {
    res.json({ links: await listShareLinks(ctx, params(req, IdParams).id) })
  })

  api.route('delete', '/share-links/:id', 'packs:manage', async (req, res) => {
    res.json({ link: await revokeShareLink(ctx, params(req, IdParams).id) })
  })

  api.route('get', '/share/:token', 'public', async (req, res) => {
    res.json({ share: await shareInfo(ctx, params(req, TokenParams).token) })
  })

  /**
   * The zip through a share link. HEAD is answered from the row (nothing counted, the file not
   * touched); GET counts a new download once the file is known to exist (see share-ranges.ts).
   */
  api.route('get', '/share/:token/download', 'public', async (req, res, next) => {
    const { token } = params(req, TokenParams)
    if (req.method === 'HEAD') {
      const head = await shareHead(ctx, token)
      res
        .status(200)
        .set({
          'Content-Type': 'application/zip',
          'Content-Length': String(head.sizeBytes),
          'Accept-Ranges': 'bytes',
          'Content-Disposition': `attachment; filename="${head.fileName}"`,
          'Cache-Control': 'private, no-store',
        })
        .end()
      return
    }
    // send must serve exactly what was planned and counted: no If-Range, no 304.
    for (const h of CONDITIONAL_HEADERS) delete req.headers[h]
    const dl = await shareDownload(ctx, token, req.headers.range)
    if (!dl.range) {
      res
        .status(416)
        .set('Content-Range', `bytes */${dl.sizeBytes}`)
        .json({
          error: {
            code: 'RANGE_NOT_SATISFIABLE',
            message: `Ask for one byte range of the file's ${dl.sizeBytes} bytes, as "Range: bytes=START-END", or for the whole file without a Range`,
            details: { sizeBytes: dl.sizeBytes },
          },
        })
      return
    }
    const { start, end } = dl.range
    const written0 = req.socket.bytesWritten
    let recorded = false
    const record = (reached: number) => {
      if (recorded) return
      recorded = true
      dl.served(reached).catch((err) => console.error('[share] could not record download progress', err))
    }
    res.on('finish', () => record(end + 1))
    // Cut off: how far it got, as far as this server can tell (what the socket took, headers included).
    res.on('close', () => record(Math.min(end + 1, start + Math.max(0, req.socket.bytesWritten - written0))))
    sendWithRanges(res, next, dl.path, dl.sizeBytes, {
      contentType: 'application/zip',
      downloadName: buildFileName(dl.build.pack_name, dl.build.version),
      cache: 'private, no-store',
    })
  })

  // Single items through a share link: listed on its page, auditioned and downloaded one by one while the link is
  // active; these do not count against the link's download limit (the whole zip does).
  for (const [suffix, how] of [
    ['audio', 'inline'],
    ['download', 'attachment'],
  ] as const) {
    api.route('get', `/share/:token/items/:itemId/${suffix}`, 'public', async (req, res, next) => {
      const { token, itemId } = params(req, ShareItemParams)
      await sendBuildItem(ctx, res, next, await shareItemBuild(ctx, token), itemId, how)
    })
  }
}

const raise = (err: Error): never => {
  throw err
}
