import { CreateCaptureSessionBody, UpdateCaptureSessionBody } from '@shared/schemas/captures'
import { IdParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import { createSession, getSession, listAllSessions, patchSession } from './captures.service'
import { captureLogCsv } from './captures.log'
import { csvFileName } from '../core/csv'

export function registerCaptureRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/capture-sessions', 'library:browse', async (_req, res) => {
    res.json({ sessions: await listAllSessions(ctx.db) })
  })

  api.route('post', '/capture-sessions', 'captures:manage', async (req, res) => {
    res.status(201).json({ session: await createSession(ctx.db, req.user!, body(req, CreateCaptureSessionBody)) })
  })

  api.route('get', '/capture-sessions/:id', 'library:browse', async (req, res) => {
    res.json({ session: await getSession(ctx.db, params(req, IdParams).id) })
  })

  api.route('patch', '/capture-sessions/:id', 'captures:manage', async (req, res) => {
    res.json({ session: await patchSession(ctx.db, params(req, IdParams).id, body(req, UpdateCaptureSessionBody)) })
  })

  /** The capture log as CSV (RFC 4180, formula-safe cells), one row per take in file-name order. */
  api.route('get', '/capture-sessions/:id/log.csv', 'library:browse', async (req, res) => {
    const { title, csv } = await captureLogCsv(ctx.db, params(req, IdParams).id)
    res.set('Content-Type', 'text/csv; charset=utf-8')
    res.attachment(csvFileName(title))
    res.send(csv)
  })
}
