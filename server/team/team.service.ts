import type { Role } from '@shared/permissions'
import type { Invitation, TeamMember, UpdateUserBody } from '@shared/schemas/team'
import type { User } from '@shared/schemas/auth'
import type { AppContext } from '../core/context'
import { AppError, notFound } from '../core/errors'
import { isoIn, nowIso } from '../core/time'
import {
  findUserByEmail,
  findUserById,
  hashPassword,
  hashToken,
  insertUser,
  listUsers,
  newToken,
  updateUser,
  userRowToMember,
  userRowToUser,
} from '../users/users.service'
import type { SqliteSessionStore } from '../core/session-store'
import { invitationMail } from '../mail/messages'
import type { InvitationRow } from '../../db/schema'

export const INVITATION_TTL_MS = 72 * 60 * 60 * 1000

const invitationRowToInvitation = (r: InvitationRow): Invitation => ({
  id: r.id,
  email: r.email,
  role: r.role as Role,
  createdAt: r.created_at,
  expiresAt: r.expires_at,
  acceptedAt: r.accepted_at,
})

export async function listTeam(ctx: AppContext): Promise<TeamMember[]> {
  return (await listUsers(ctx.db)).map(userRowToMember)
}

export async function updateMember(
  ctx: AppContext,
  store: SqliteSessionStore,
  actor: User,
  id: number,
  patch: UpdateUserBody,
): Promise<TeamMember> {
  if (actor.id === id && patch.active === false)
    throw new AppError(409, 'SELF_DEACTIVATION', 'You cannot deactivate yourself')
  // Check and change in one transaction: two admins demoting each other at once cannot leave none.
  const updated = await ctx.db.transaction().execute(async (trx) => {
    const row = await findUserById(trx, id)
    if (!row) throw notFound('team member', 'USER_NOT_FOUND')
    const losesAdmin =
      row.role === 'admin' && row.active === 1 && ((patch.role && patch.role !== 'admin') || patch.active === false)
    if (losesAdmin) {
      const admins = await trx
        .selectFrom('users')
        .select('id')
        .where('role', '=', 'admin')
        .where('active', '=', 1)
        .execute()
      if (admins.length <= 1) throw new AppError(409, 'LAST_ADMIN', 'The team needs at least one active admin')
    }
    return updateUser(trx, id, {
      ...(patch.role ? { role: patch.role } : {}),
      ...(patch.active !== undefined ? { active: patch.active ? 1 : 0 } : {}),
    })
  })
  if (patch.active === false) await store.destroyForUser(id)
  return userRowToMember(updated!)
}

export async function listInvitations(ctx: AppContext): Promise<Invitation[]> {
  const rows = await ctx.db.selectFrom('invitations').selectAll().orderBy('created_at', 'desc').execute()
  return rows.map(invitationRowToInvitation)
}

async function sendInvitation(ctx: AppContext, email: string, role: Role, token: string, inviter: string) {
  await ctx.mailer.send(invitationMail(email, role, `${ctx.config.publicUrl}/join/${token}`, inviter))
}

export async function invite(ctx: AppContext, actor: User, email: string, role: Role): Promise<Invitation> {
  if (await findUserByEmail(ctx.db, email)) {
    throw new AppError(409, 'ALREADY_MEMBER', `${email} already has an account`)
  }
  const { token, hash } = newToken()
  const row = await ctx.db
    .insertInto('invitations')
    .values({
      email,
      role,
      token_hash: hash,
      invited_by: actor.id,
      created_at: nowIso(),
      expires_at: isoIn(INVITATION_TTL_MS),
    })
    .returningAll()
    .executeTakeFirstOrThrow()
  try {
    await sendInvitation(ctx, email, role, token, actor.name)
  } catch (err) {
    // No invitation without its mail: nothing half-done is left behind.
    await ctx.db.deleteFrom('invitations').where('id', '=', row.id).execute()
    throw new AppError(502, 'MAIL_FAILED', `The invitation could not be sent: ${(err as Error).message}`)
  }
  return invitationRowToInvitation(row)
}

/** Withdraws an invitation not yet accepted: its link stops working at once. */
export async function withdrawInvitation(ctx: AppContext, id: number): Promise<void> {
  const row = await ctx.db
    .selectFrom('invitations')
    .select(['id', 'accepted_at'])
    .where('id', '=', id)
    .executeTakeFirst()
  if (!row) throw notFound('invitation', 'INVITATION_NOT_FOUND')
  if (row.accepted_at)
    throw new AppError(
      409,
      'INVITATION_ACCEPTED',
      'This invitation was already accepted; deactivate the member instead',
    )
  await ctx.db.deleteFrom('invitations').where('id', '=', id).where('accepted_at', 'is', null).execute()
}

/** A new token and a fresh 72 h: the old link stops working. */
export async function resendInvitation(ctx: AppContext, actor: User, id: number): Promise<Invitation> {
  const row = await ctx.db.selectFrom('invitations').selectAll().where('id', '=', id).executeTakeFirst()
  if (!row) throw notFound('invitation', 'INVITATION_NOT_FOUND')
  if (row.accepted_at) throw new AppError(409, 'INVITATION_ACCEPTED', 'This invitation was already accepted')
  const { token, hash } = newToken()
  const updated = await ctx.db
    .updateTable('invitations')
    .set({ token_hash: hash, created_at: nowIso(), expires_at: isoIn(INVITATION_TTL_MS) })
    .where('id', '=', id)
    .returningAll()
    .executeTakeFirstOrThrow()
  await sendInvitation(ctx, row.email, row.role as Role, token, actor.name)
  return invitationRowToInvitation(updated)
}

export async function acceptInvitation(ctx: AppContext, token: string, name: string, password: string): Promise<User> {
  const row = await ctx.db
    .selectFrom('invitations')
    .selectAll()
    .where('token_hash', '=', hashToken(token))
    .executeTakeFirst()
  if (!row || row.accepted_at || row.expires_at < nowIso()) {
    throw new AppError(
      410,
      'TOKEN_INVALID',
      'This invitation link is invalid, used or expired: ask your admin for a new one',
    )
  }
  const passwordHash = await hashPassword(password)
  return ctx.db.transaction().execute(async (trx) => {
    const claimed = await trx
      .updateTable('invitations')
      .set({ accepted_at: nowIso() })
      .where('id', '=', row.id)
      .where('accepted_at', 'is', null)
      .executeTakeFirst()
    if (Number(claimed.numUpdatedRows) !== 1)
      throw new AppError(410, 'TOKEN_INVALID', 'This invitation was already used')
    if (await findUserByEmail(trx, row.email))
      throw new AppError(409, 'ALREADY_MEMBER', `${row.email} already has an account`)
    // Joining signs the invitee in, so it is their first sign-in.
    const user = await insertUser(trx, {
      email: row.email,
      name,
      role: row.role,
      password_hash: passwordHash,
      last_login_at: nowIso(),
    })
    return userRowToUser(user)
  })
}
