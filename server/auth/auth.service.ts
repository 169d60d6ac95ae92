import type { AppContext } from '../core/context'
import type { Db } from '../core/database'
import { AppError } from '../core/errors'
import { isoIn, nowIso } from '../core/time'
import { passwordResetMail } from '../mail/messages'
import { findUserByEmail, hashPassword, hashToken, newToken, updateUser } from '../users/users.service'
import type { SqliteSessionStore } from '../core/session-store'

const RESET_TTL_MS = 60 * 60 * 1000

/** Voids every outstanding reset link of a user (but `keep`). */
const voidOtherTokens = (db: Db, userId: number, keep: number | null = null) =>
  db
    .updateTable('password_resets')
    .set({ used_at: nowIso() })
    .where('user_id', '=', userId)
    .where('used_at', 'is', null)
    .$if(keep !== null, (q) => q.where('id', '!=', keep!))
    .execute()

/**
 * Runs after the 202 is sent (the answer takes the same time whether or not the address belongs
 * to someone). A new link voids every earlier one of the same user.
 */
export async function requestPasswordReset(ctx: AppContext, email: string): Promise<void> {
  const user = await findUserByEmail(ctx.db, email)
  if (!user || user.active !== 1) return
  const { token, hash } = newToken()
  await ctx.db.transaction().execute(async (trx) => {
    await voidOtherTokens(trx, user.id)
    await trx
      .insertInto('password_resets')
      .values({ user_id: user.id, token_hash: hash, created_at: nowIso(), expires_at: isoIn(RESET_TTL_MS) })
      .execute()
  })
  await ctx.mailer.send(passwordResetMail(user.email, `${ctx.config.publicUrl}/reset/${token}`))
}

export async function completePasswordReset(
  ctx: AppContext,
  store: SqliteSessionStore,
  token: string,
  password: string,
): Promise<void> {
  const row = await ctx.db
    .selectFrom('password_resets')
    .selectAll()
    .where('token_hash', '=', hashToken(token))
    .executeTakeFirst()
  if (!row || row.used_at || row.expires_at < nowIso()) {
    throw new AppError(410, 'TOKEN_INVALID', 'This reset link is invalid, used or expired: ask for a new one')
  }
  const passwordHash = await hashPassword(password)
  await ctx.db.transaction().execute(async (trx) => {
    // Mark used first, guarded on used_at, so two racing requests cannot both pass.
    const used = await trx
      .updateTable('password_resets')
      .set({ used_at: nowIso() })
      .where('id', '=', row.id)
      .where('used_at', 'is', null)
      .executeTakeFirst()
    if (Number(used.numUpdatedRows) !== 1) throw new AppError(410, 'TOKEN_INVALID', 'This reset link was already used')
    await updateUser(trx, row.user_id, { password_hash: passwordHash })
    await voidOtherTokens(trx, row.user_id, row.id)
  })
  await store.destroyForUser(row.user_id)
}
