import fs from 'node:fs'
import { z } from 'zod'
import { Id, IdParams } from '@shared/schemas/common'
import { PublishBuildBody } from '@shared/schemas/packs'
import type { AppContext } from '../../core/context'
import { fileError } from '../../core/errors'
import type { Api } from '../../core/routes'
import { body, params } from '../../core/validate'
import { buildFileName } from '../curation/naming'
import { sendBuildItem } from '../delivery/send-build-item'
import { sendWithRanges } from '../delivery/send-with-ranges'
import { buildToApi } from './builds.mapper'
import { buildChanges, buildZip, listBuilds, publishBuild, requestBuild, visibleBuild } from './builds.service'

const ItemParams = z.object({ id: Id, itemId: Id })

/** Versions of a pack: asked for, listed, published with a note, downloaded whole or item by item. */
export function registerBuildRoutes(api: Api, ctx: AppContext) {
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
    const { key, build } = await buildZip(ctx, req.user!, params(req, IdParams).id)
    const downloadName = buildFileName(build.pack_name, build.version)
    // With S3 and no copy on this machine the browser fetches the zip from the bucket itself,
    // through a link that works for five minutes (resumable there by Range too).
    const direct = ctx.storage.remote && !fs.existsSync(ctx.storage.abs(key))
    if (direct && (await ctx.storage.blobs.size(key)) === null) throw fileError({ code: 'ENOENT' })
    const url = direct ? await ctx.storage.blobs.presign(key, { expiresSeconds: 300, downloadName }) : null
    if (url) return res.redirect(302, url)
    sendWithRanges(res, next, await ctx.storage.local(key), build.size_bytes ?? 0, {
      contentType: 'application/zip',
      downloadName,
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
}
