import type { AppContext } from '../core/context'
import { countUsers, hashPassword, insertUser } from '../users/users.service'
import { DEMO_ACCOUNTS, DEMO_PASSWORD } from './demo-team'
import { seedDemoLibrary } from './demo-library'

/** Seeds the invented demo scenario into an empty database. Returns whether it did. */
export async function seedDemo(ctx: AppContext): Promise<boolean> {
  if ((await countUsers(ctx.db)) > 0) return false
  const passwordHash = await hashPassword(DEMO_PASSWORD)
  const ids: Record<string, number> = {}
  for (const a of DEMO_ACCOUNTS) {
    ids[a.role] = (
      await insertUser(ctx.db, { email: a.email, name: a.name, role: a.role, password_hash: passwordHash })
    ).id
  }
  if (ctx.config.demoAudio) await seedDemoLibrary(ctx, ids.recordist)
  return true
}
