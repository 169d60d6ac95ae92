import fs from 'node:fs'
import path from 'node:path'
import express, { type Express } from 'express'
import session from 'express-session'
import helmet from 'helmet'
import cookieParser from 'cookie-parser'
import type { AppContext } from './core/context'
import { apiNotFound, errorHandler } from './core/errors'
import { createApi } from './core/routes'
import { sessionSecret } from './core/settings'
import { createPassport } from './auth/passport'
import { createCsrf } from './auth/csrf'
import { SqliteSessionStore } from './core/session-store'
import { registerAuthRoutes } from './auth/auth.routes'
import { registerTeamRoutes } from './team/team.routes'
import { registerOutboxRoutes } from './mail/outbox.routes'
import { registerHealthRoutes } from './health/health.routes'
import { registerCaptureRoutes } from './captures/captures.routes'
import { registerTusRoutes } from './ingest/tus.routes'
import { registerIngestRoutes } from './ingest/ingest.routes'
import { bodyDeadline } from './ingest/slow-bodies'
import { registerTakeRoutes } from './takes/takes.routes'
import { registerTakeRemovalRoutes } from './takes/takes.removal.routes'
import { registerSpectrogramRoutes } from './spectrogram/spectrogram.routes'
import { registerSourceRoutes } from './sources/sources.routes'
import { registerRegionRoutes } from './regions/regions.routes'
import { registerInstrumentRoutes } from './instrument/instrument.routes'
import { registerCommentRoutes } from './comments/comments.routes'
import { registerPackRoutes } from './packs/packs.routes'
import { registerTakeExportRoutes } from './takes/takes.export'
import { registerTagRoutes } from './tags/tags.routes'
import { registerMentionRoutes } from './mentions/mentions.routes'
import { registerModulationRoutes } from './modulation/modulation.routes'
import { registerSimilarRoutes } from './similar/similar.routes'
import { registerSuggestedTagRoutes } from './character/suggested-tags'

export interface BuiltApp {
  app: Express
  close(): Promise<void>
}

/** The HTTP app: middleware in order, then every feature's routes, then the one error handler. */
export async function createApp(ctx: AppContext): Promise<BuiltApp> {
  const app = express()
  const secure = ctx.config.publicUrl.startsWith('https:')
  const secret = await sessionSecret(ctx.db, ctx.config.sessionSecret)
  const passport = createPassport(ctx.db)
  const store = new SqliteSessionStore(ctx.db, ctx.config.sessionAbsoluteMs)
  const csrf = createCsrf(secret, secure)
  // Under https the cookie is bound to this host and path (the __Host- prefix, RFC 6265bis).
  const sessionCookie = secure ? '__Host-sf.sid' : 'sf.sid'
  const cookieOptions = { path: '/', secure, httpOnly: true, sameSite: 'lax' as const }

  // Only from explicit configuration: which proxy's X-Forwarded-For to believe (sign-in limits use the address).
  if (ctx.config.trustProxy !== null) app.set('trust proxy', ctx.config.trustProxy)
  app.disable('x-powered-by')
  app.use(helmet(helmetOptions(secure)))
  app.use('/api', (_req, res, next) => {
    res.set('Cache-Control', 'no-store') // routes that may be cached (images, previews) say so themselves
    next()
  })
  app.use(bodyDeadline(ctx.config.requestBodyTimeoutMs))
  app.use(cookieParser())
  app.use(express.json({ limit: '1mb' }))
  app.use(
    session({
      name: sessionCookie,
      secret,
      store,
      resave: false,
      saveUninitialized: false,
      rolling: true,
      cookie: { ...cookieOptions, maxAge: 14 * 24 * 60 * 60 * 1000 },
    }),
  )
  app.use(passport.initialize())
  app.use(passport.session())
  app.use('/api', csrf.protect)

  const api = createApi(app)
  registerHealthRoutes(api, ctx)
  registerAuthRoutes(api, ctx, {
    passport,
    store,
    csrfToken: csrf.generateCsrfToken,
    preSignIn: csrf.preSignIn,
    sessionCookie,
    cookieOptions,
  })
  registerTeamRoutes(api, ctx, { store, passport })
  registerOutboxRoutes(api, ctx)
  registerCaptureRoutes(api, ctx)
  registerIngestRoutes(api, ctx)
  registerTusRoutes(api, ctx)
  registerSuggestedTagRoutes(api, ctx) // before /takes/:id routes
  registerTakeRoutes(api, ctx)
  registerTakeRemovalRoutes(api, ctx)
  registerSpectrogramRoutes(api, ctx)
  registerSourceRoutes(api, ctx)
  registerRegionRoutes(api, ctx)
  registerInstrumentRoutes(api, ctx)
  registerCommentRoutes(api, ctx)
  registerPackRoutes(api, ctx)
  registerTakeExportRoutes(api, ctx)
  registerTagRoutes(api, ctx)
  registerMentionRoutes(api, ctx)
  registerModulationRoutes(api, ctx)
  registerSimilarRoutes(api, ctx)
  app.use('/api', api.router)
  app.use('/api', apiNotFound)

  serveClient(app, ctx.config.clientDir)
  app.use(errorHandler)

  return {
    app,
    async close() {
      store.close()
    },
  }
}

/**
 * Security headers (helmet). Styles and fonts from this origin only: the built client has its CSS
 * in files, and Vue and Element Plus set inline styles through the CSSOM, which CSP allows; style
 * attributes in markup stay blocked. One narrow exception, checked in Chromium
 * (tests/browser/csp.test.ts): `<style>` elements (style-src-elem), because wavesurfer.js draws the
 * waveform in a shadow root with a `<style>` whose height is computed at run time (no fixed hash;
 * its cspNonce option would need a nonce per served page). HSTS
 * and upgrade-insecure-requests only when the app is served over https (over plain http they
 * would send browsers to an https that does not exist).
 */
export function helmetOptions(secure: boolean): Parameters<typeof helmet>[0] {
  return {
    contentSecurityPolicy: {
      useDefaults: true,
      directives: {
        'style-src': ["'self'"],
        'style-src-elem': ["'self'", "'unsafe-inline'"],
        'font-src': ["'self'"],
        'img-src': ["'self'", 'data:', 'blob:'],
        'media-src': ["'self'", 'blob:'],
        'worker-src': ["'self'", 'blob:'],
        'upgrade-insecure-requests': secure ? [] : null,
      },
    },
    strictTransportSecurity: secure ? { maxAge: 365 * 24 * 60 * 60, includeSubDomains: true } : false,
    crossOriginEmbedderPolicy: false,
  }
}

/** The built client and its history-mode fallback, when a build exists. */
function serveClient(app: Express, dir: string) {
  const index = path.join(dir, 'index.html')
  if (!fs.existsSync(index)) return
  app.use(express.static(dir, { index: false, maxAge: '1h' }))
  app.get(/^(?!\/api\/).*/, (_req, res) => res.sendFile(index))
}
