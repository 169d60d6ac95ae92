import type { RequestHandler } from 'express'
import type { AppContext } from '../core/context'
import { requireAccess, type Api } from '../core/routes'
import { minimumRate } from './slow-bodies'
import { createTusServer } from './tus'

/**
 * The tus endpoint under /api/files (creation, HEAD for the offset, PATCH for bytes, DELETE).
 * Express 5's path syntax names the wildcard ("*splat"); a bare "*" throws. Access as for the
 * multipart upload route (signed in, may manage captures); the /api CSRF guard covers POST,
 * PATCH and DELETE. A PATCH has a minimum rate instead of the whole-body deadline: a slow
 * client is cut off, and what it sent stays for the resume.
 */
export function registerTusRoutes(api: Api, ctx: AppContext) {
  const tus = createTusServer(ctx)
  const rate = minimumRate(ctx.config.uploadMinBytesPerSecond, ctx.config.uploadRateWindowMs)
  const patchRate: RequestHandler = (req, res, next) => (req.method === 'PATCH' ? rate(req, res, next) : next())
  api.router.all(['/files', '/files/*splat'], requireAccess('captures:manage'), patchRate, (req, res, next) => {
    tus.handle(req, res).catch(next)
  })
}
