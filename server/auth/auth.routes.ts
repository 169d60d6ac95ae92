import type { Request, RequestHandler, Response } from 'express'
import { ipKeyGenerator, rateLimit } from 'express-rate-limit'
import type { PassportStatic } from 'passport'
import { LoginBody, PasswordResetBody, PasswordResetRequest } from '@shared/schemas/auth'
import { TokenParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import { nowIso } from '../core/time'
import { updateUser } from '../users/users.service'
import { completePasswordReset, requestPasswordReset } from './auth.service'
import { LoginThrottle } from './login-throttle'
import type { SqliteSessionStore } from '../core/session-store'

interface AuthDeps {
  passport: PassportStatic
  store: SqliteSessionStore
  csrfToken: (req: Parameters<RequestHandler>[0], res: Parameters<RequestHandler>[1]) => string
  /** Gives an anonymous visitor the cookie its CSRF token is bound to (no session row). */
  preSignIn: (req: Request, res: Response) => void
  sessionCookie: string
  cookieOptions: { path: string; secure: boolean; httpOnly: boolean; sameSite: 'lax' }
}

const HOUR = 60 * 60 * 1000

export function registerAuthRoutes(api: Api, ctx: AppContext, deps: AuthDeps): void {
  const c = ctx.config
  const perAccount = new LoginThrottle({
    free: c.loginFailuresAllowed,
    baseMs: c.loginDelayBaseMs,
    maxMs: c.loginDelayMaxMs,
    forgetMs: c.loginWindowMs,
  })
  const perAddress = new LoginThrottle({
    free: c.loginFailuresAllowed * 3,
    baseMs: c.loginDelayBaseMs,
    maxMs: 15 * 60 * 1000,
    forgetMs: c.loginWindowMs,
  })

  const authenticate = (req: Request, res: Response) =>
    new Promise<Express.User | false>((resolve, reject) => {
      deps.passport.authenticate('local', (err: unknown, user: Express.User | false) =>
        err ? reject(err) : resolve(user),
      )(req, res, reject)
    })

  api.route('get', '/auth/csrf', 'public', (req, res) => {
    if (!req.user) deps.preSignIn(req, res)
    res.json({ token: deps.csrfToken(req, res) })
  })

  api.route('post', '/auth/login', 'public', async (req, res, next) => {
    const creds = body(req, LoginBody)
    req.body = creds
    const address = req.ip ?? 'unknown'
    const user = await perAccount.serial(creds.email, async () => {
      const wait = Math.max(perAccount.waitMs(creds.email), perAddress.waitMs(address))
      if (wait > 0) {
        const seconds = Math.ceil(wait / 1000)
        res.set('Retry-After', String(seconds))
        throw new AppError(429, 'TOO_MANY_ATTEMPTS', `Too many failed sign-ins: wait ${seconds} s and try again`, {
          retryAfterSeconds: seconds,
        })
      }
      const found = await authenticate(req, res)
      if (!found) {
        perAccount.fail(creds.email)
        perAddress.fail(address)
        throw new AppError(401, 'INVALID_CREDENTIALS', 'That e-mail and password do not match an active account')
      }
      perAccount.succeed(creds.email)
      return found
    })
    // passport regenerates the session id on login.
    req.login(user, (loginErr) => {
      if (loginErr) return next(loginErr)
      updateUser(ctx.db, user.id, { last_login_at: nowIso() })
        .then(() => res.json({ user }))
        .catch(next)
    })
  })

  api.route('post', '/auth/logout', 'public', (req, res, next) => {
    req.logout((err) => {
      if (err) return next(err)
      req.session.destroy((destroyErr) => {
        if (destroyErr) return next(destroyErr)
        res.clearCookie(deps.sessionCookie, deps.cookieOptions)
        res.json({ ok: true })
      })
    })
  })

  api.route('get', '/auth/me', 'signed-in', (req, res) => {
    res.json({ user: req.user })
  })

  // Per client address and per target address, every request counts (a reset mail is sent or not).
  const resetLimit = (limit: number, key: (req: Request) => string) =>
    rateLimit({
      windowMs: HOUR,
      limit,
      keyGenerator: key,
      standardHeaders: 'draft-8',
      legacyHeaders: false,
      handler: () => {
        throw new AppError(429, 'TOO_MANY_RESETS', 'Too many password-reset requests: wait an hour and try again')
      },
    })
  const resetPerAddress = resetLimit(c.passwordResetsPerAddress, (req) => `address:${ipKeyGenerator(req.ip ?? '')}`)
  const resetPerEmail = resetLimit(
    c.passwordResetsPerEmail,
    (req) =>
      `email:${String(req.body?.email ?? '')
        .trim()
        .toLowerCase()}`,
  )

  /** 202 at once, whoever the address belongs to; the lookup and the mail happen afterwards. */
  api.route('post', '/auth/password-reset', 'public', resetPerAddress, resetPerEmail, (req, res) => {
    const { email } = body(req, PasswordResetRequest)
    res.status(202).json({ ok: true, message: 'If that address belongs to an account, a reset link is on its way' })
    requestPasswordReset(ctx, email).catch((err) =>
      console.error(`[auth] password reset mail failed: ${(err as Error).message}`),
    )
  })

  api.route('post', '/auth/password-reset/:token', 'public', async (req, res) => {
    const { token } = params(req, TokenParams)
    const { password } = body(req, PasswordResetBody)
    await completePasswordReset(ctx, deps.store, token, password)
    res.json({ ok: true })
  })
}
