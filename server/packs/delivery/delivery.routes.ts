import { Id, IdParams, TokenParams } from '@shared/schemas/common'
import { CreateShareLinkBody } from '@shared/schemas/packs'
import type { AppContext } from '../../core/context'
import type { Api } from '../../core/routes'
import { body, params } from '../../core/validate'
import { setFollowing } from './follows'
import { sendBuildItem } from './send-build-item'
import { sendShareDownload } from './share-download'
import { createShareLink, listShareLinks, revokeShareLink, shareInfo, shareItemBuild } from './share.service'

const ShareItemParams = TokenParams.extend({ itemId: Id })

/** Getting packs out: following them, and share links for people without an account. */
export function registerDeliveryRoutes(api: Api, ctx: AppContext) {
  followRoutes(api, ctx)
  shareLinkRoutes(api, ctx)
  shareRoutes(api, ctx)
}

function followRoutes(api: Api, ctx: AppContext) {
  api.route('post', '/packs/:id/follow', 'packs:receive', async (req, res) => {
    res.json(await setFollowing(ctx, req.user!, params(req, IdParams).id, true))
  })

  api.route('delete', '/packs/:id/follow', 'packs:receive', async (req, res) => {
    res.json(await setFollowing(ctx, req.user!, params(req, IdParams).id, false))
  })
}

/** Making and revoking links: designers only. */
function shareLinkRoutes(api: Api, ctx: AppContext) {
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
}

/** What a link opens, for anyone holding it: the page, the zip and its single items. */
function shareRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/share/:token', 'public', async (req, res) => {
    res.json({ share: await shareInfo(ctx, params(req, TokenParams).token) })
  })

  api.route('get', '/share/:token/download', 'public', async (req, res, next) => {
    await sendShareDownload(ctx, params(req, TokenParams).token, req, res, next)
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
