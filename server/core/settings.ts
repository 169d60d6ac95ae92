import { randomBytes } from 'node:crypto'
import type { Db } from './database'

export async function getSetting(db: Db, key: string): Promise<string | null> {
  const row = await db.selectFrom('settings').select('value').where('key', '=', key).executeTakeFirst()
  return row?.value ?? null
}

export async function setSetting(db: Db, key: string, value: string): Promise<void> {
  await db
    .insertInto('settings')
    .values({ key, value })
    .onConflict((oc) => oc.column('key').doUpdateSet({ value }))
    .execute()
}

/** SESSION_SECRET when given; otherwise one generated once and kept, so sessions survive restarts. */
export async function sessionSecret(db: Db, fromEnv: string | null): Promise<string> {
  if (fromEnv) return fromEnv
  const kept = await getSetting(db, 'session_secret')
  if (kept) return kept
  const fresh = randomBytes(48).toString('base64url')
  await setSetting(db, 'session_secret', fresh)
  return fresh
}
