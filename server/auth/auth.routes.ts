import type { RequestHandler } from 'express'
import { rateLimit } from 'express-rate-limit'
import type { PassportStatic } from 'passport'
import { LoginBody, PasswordResetBody, PasswordResetRequest } from '@shared/schemas/auth'
import { TokenParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import { nowIso } from '../core/time'
import { updateUser } from '../team/users.repository'
import { completePasswordReset, requestPasswordReset } from './auth.service'
import type { SqliteSessionStore } from './session-store'

interface AuthDeps {
  passport: PassportStatic
  store: SqliteSessionStore
  csrfToken: (req: Parameters<RequestHandler>[0], res: Parameters<RequestHandler>[1]) => string
}

export function registerAuthRoutes(api: Api, ctx: AppContext, deps: AuthDeps): void {
  const tooMany = () => {
    throw new AppError(429, 'TOO_MANY_ATTEMPTS', 'Too many failed sign-ins: wait a few minutes and try again')
  }
  // Only failed attempts count (skipSuccessfulRequests), per address and per account.
  const common = {
    windowMs: ctx.config.loginWindowMs,
    limit: ctx.config.loginFailuresAllowed,
    skipSuccessfulRequests: true,
    standardHeaders: 'draft-8' as const,
    legacyHeaders: false,
    handler: tooMany,
  }
  const perAddress = rateLimit({ ...common, identifier: 'address' })
  const perAccount = rateLimit({
    ...common,
    identifier: 'account',
    keyGenerator: (req) => `account:${String(req.body?.email ?? '').trim().toLowerCase()}`,
  })

  api.route('get', '/auth/csrf', 'public', (req, res) => {
    // Persist the session so the token stays tied to a stable session id.
    req.session.csrfReady = true
    res.json({ token: deps.csrfToken(req, res) })
  })

  api.route('post', '/auth/login', 'public', perAddress, perAccount, (req, res, next) => {
    const creds = body(req, LoginBody)
    req.body = creds
    deps.passport.authenticate('local', (err: unknown, user: Express.User | false) => {
      if (err) return next(err)
      if (!user) return next(new AppError(401, 'INVALID_CREDENTIALS', 'That e-mail and password do not match an active account'))
      // passport regenerates the session id on login.
      req.login(user, (loginErr) => {
        if (loginErr) return next(loginErr)
        updateUser(ctx.db, user.id, { last_login_at: nowIso() })
          .then(() => res.json({ user }))
          .catch(next)
      })
    })(req, res, next)
  })

  api.route('post', '/auth/logout', 'public', (req, res, next) => {
    req.logout((err) => {
      if (err) return next(err)
      req.session.destroy((destroyErr) => {
        if (destroyErr) return next(destroyErr)
        res.clearCookie('sf.sid')
        res.json({ ok: true })
      })
    })
  })

  api.route('get', '/auth/me', 'signed-in', (req, res) => {
    res.json({ user: req.user })
  })

  api.route('post', '/auth/password-reset', 'public', async (req, res) => {
    const { email } = body(req, PasswordResetRequest)
    await requestPasswordReset(ctx, email)
    res.status(202).json({ ok: true, message: 'If that address belongs to an account, a reset link is on its way' })
  })

  api.route('post', '/auth/password-reset/:token', 'public', async (req, res) => {
    const { token } = params(req, TokenParams)
    const { password } = body(req, PasswordResetBody)
    await completePasswordReset(ctx, deps.store, token, password)
    res.json({ ok: true })
  })
}
