import { randomBytes } from 'node:crypto'
import { doubleCsrf } from 'csrf-csrf'
import type { Request, RequestHandler, Response } from 'express'
import { AppError } from '../core/errors'

/**
 * Double-submit CSRF tokens (csrf-csrf). A signed-in member's token is tied to the session id;
 * an anonymous visitor's to a random identifier in a cookie of its own (stateless: no session
 * row is stored for someone who never signs in). The client fetches a token from
 * GET /api/auth/csrf and sends it as `x-csrf-token` on every state-changing request; it fetches
 * a new one after signing in or out, because the identifier changes then.
 */
export function createCsrf(secret: string, secure: boolean) {
  const preCookie = secure ? '__Host-sf.pre' : 'sf.pre'
  const cookieOptions = { sameSite: 'lax' as const, secure, httpOnly: true, path: '/' }
  const { generateCsrfToken, doubleCsrfProtection } = doubleCsrf({
    getSecret: () => secret,
    getSessionIdentifier: (req) =>
      req.user ? `session:${req.sessionID}` : `pre:${(req.cookies?.[preCookie] as string | undefined) ?? ''}`,
    cookieName: secure ? '__Host-sf.csrf' : 'sf.csrf',
    cookieOptions,
    getCsrfTokenFromRequest: (req) => req.headers['x-csrf-token'] as string | undefined,
  })
  const protect: RequestHandler = (req, res, next) => {
    doubleCsrfProtection(req, res, (err?: unknown) => {
      if (err)
        return next(
          new AppError(
            403,
            'CSRF_INVALID',
            'Missing or invalid CSRF token: fetch one from GET /api/auth/csrf and send it in x-csrf-token',
          ),
        )
      next()
    })
  }
  /** The anonymous identifier: kept when the visitor has one, else a fresh one (cookie for the browser session). */
  const preSignIn = (req: Request, res: Response) => {
    if (typeof req.cookies?.[preCookie] === 'string' && req.cookies[preCookie].length >= 16) return
    const id = randomBytes(18).toString('base64url')
    req.cookies = { ...(req.cookies ?? {}), [preCookie]: id }
    res.cookie(preCookie, id, cookieOptions)
  }
  return { generateCsrfToken, protect, preSignIn }
}
