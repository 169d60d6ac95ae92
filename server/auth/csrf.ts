import { doubleCsrf } from 'csrf-csrf'
import type { RequestHandler } from 'express'
import { AppError } from '../core/errors'

/**
 * Double-submit CSRF tokens (csrf-csrf), tied to the session id. The client
 * fetches a token from GET /api/auth/csrf and sends it as `x-csrf-token` on every
 * state-changing request; it fetches a new one after signing in or out, because
 * the session id changes then.
 */
export function createCsrf(secret: string, secure: boolean) {
  const { generateCsrfToken, doubleCsrfProtection } = doubleCsrf({
    getSecret: () => secret,
    getSessionIdentifier: (req) => req.sessionID,
    cookieName: secure ? '__Host-sf.csrf' : 'sf.csrf',
    cookieOptions: { sameSite: 'lax', secure, httpOnly: true, path: '/' },
    getCsrfTokenFromRequest: (req) => req.headers['x-csrf-token'] as string | undefined,
  })
  const protect: RequestHandler = (req, res, next) => {
    doubleCsrfProtection(req, res, (err?: unknown) => {
      if (err) return next(new AppError(403, 'CSRF_INVALID', 'Missing or invalid CSRF token: fetch one from GET /api/auth/csrf and send it in x-csrf-token'))
      next()
    })
  }
  return { generateCsrfToken, protect }
}
