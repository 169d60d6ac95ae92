import type { AppContext } from '../core/context'
import { hashPassword } from '../auth/passwords'
import { countUsers, insertUser } from '../team/users.repository'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from './demo-team'

/** Seeds the invented demo scenario into an empty database. Returns whether it did. */
export async function seedDemo(ctx: AppContext): Promise<boolean> {
  if ((await countUsers(ctx.db)) > 0) return false
  const passwordHash = await hashPassword(DEMO_PASSWORD)
  for (const a of DEMO_ACCOUNTS) {
    await insertUser(ctx.db, { email: a.email, name: a.name, role: a.role, password_hash: passwordHash })
  }
  return true
}
