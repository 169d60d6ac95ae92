import type { PassportStatic } from 'passport'
import { AcceptInvitationBody, CreateInvitationBody, UpdateUserBody } from '@shared/schemas/team'
import { IdParams, TokenParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import type { SqliteSessionStore } from '../core/session-store'
import {
  acceptInvitation,
  invite,
  listInvitations,
  listTeam,
  resendInvitation,
  updateMember,
  withdrawInvitation,
} from './team.service'

export function registerTeamRoutes(
  api: Api,
  ctx: AppContext,
  deps: { store: SqliteSessionStore; passport: PassportStatic },
) {
  api.route('get', '/users', 'team:manage', async (_req, res) => {
    res.json({ users: await listTeam(ctx) })
  })

  api.route('patch', '/users/:id', 'team:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    const user = await updateMember(ctx, deps.store, req.user!, id, body(req, UpdateUserBody))
    res.json({ user })
  })

  api.route('get', '/invitations', 'team:manage', async (_req, res) => {
    res.json({ invitations: await listInvitations(ctx) })
  })

  api.route('post', '/invitations', 'team:manage', async (req, res) => {
    const { email, role } = body(req, CreateInvitationBody)
    res.status(201).json({ invitation: await invite(ctx, req.user!, email, role) })
  })

  api.route('post', '/invitations/:id/resend', 'team:manage', async (req, res) => {
    const { id } = params(req, IdParams)
    res.json({ invitation: await resendInvitation(ctx, req.user!, id) })
  })

  api.route('delete', '/invitations/:id', 'team:manage', async (req, res) => {
    await withdrawInvitation(ctx, params(req, IdParams).id)
    res.status(204).end()
  })

  api.route('post', '/invitations/:token/accept', 'public', async (req, res, next) => {
    const { token } = params(req, TokenParams)
    const { name, password } = body(req, AcceptInvitationBody)
    const user = await acceptInvitation(ctx, token, name, password)
    // The invitee is signed in at once.
    req.login(user, (err) => (err ? next(err) : res.status(201).json({ user })))
  })
}
