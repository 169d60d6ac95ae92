import session from 'express-session'
import type { Db } from './database'

const DAY = 24 * 60 * 60 * 1000

/**
 * express-session store kept in the app's own SQLite through Kysely. Written here
 * because the only ready-made better-sqlite3 store is GPL-licensed. Rows exist only
 * for signed-in members (anonymous visitors' CSRF identifiers live in a cookie);
 * each carries its user (indexed) and its start: besides the rolling expiry, a
 * session ends `absoluteMs` after it began, however active it stays.
 */
export class SqliteSessionStore extends session.Store {
  private sweeper: NodeJS.Timeout

  constructor(
    private db: Db,
    private absoluteMs = 30 * DAY,
  ) {
    super()
    this.sweeper = setInterval(() => void this.sweep(), 60 * 60 * 1000)
    this.sweeper.unref()
  }

  override get(sid: string, cb: (err: unknown, s?: session.SessionData | null) => void): void {
    this.db
      .selectFrom('sessions')
      .select(['data', 'expires_at', 'created_at'])
      .where('sid', '=', sid)
      .executeTakeFirst()
      .then((row) => {
        const now = Date.now()
        cb(null, row && row.expires_at > now && row.created_at + this.absoluteMs > now ? JSON.parse(row.data) : null)
      })
      .catch((err) => cb(err))
  }

  override set(sid: string, s: session.SessionData, cb?: (err?: unknown) => void): void {
    const expires = s.cookie?.expires ? new Date(s.cookie.expires).getTime() : Date.now() + DAY
    const data = JSON.stringify(s)
    const userId = typeof s.passport?.user === 'number' ? s.passport.user : null
    this.db
      .insertInto('sessions')
      .values({ sid, data, expires_at: expires, user_id: userId, created_at: Date.now() })
      .onConflict((oc) => oc.column('sid').doUpdateSet({ data, expires_at: expires, user_id: userId }))
      .execute()
      .then(() => cb?.())
      .catch((err) => cb?.(err))
  }

  override destroy(sid: string, cb?: (err?: unknown) => void): void {
    this.db
      .deleteFrom('sessions')
      .where('sid', '=', sid)
      .execute()
      .then(() => cb?.())
      .catch((err) => cb?.(err))
  }

  override touch(sid: string, s: session.SessionData, cb?: (err?: unknown) => void): void {
    const expires = s.cookie?.expires ? new Date(s.cookie.expires).getTime() : Date.now() + DAY
    this.db
      .updateTable('sessions')
      .set({ expires_at: expires })
      .where('sid', '=', sid)
      .execute()
      .then(() => cb?.())
      .catch((err) => cb?.(err))
  }

  /** Drop every session of a user (deactivation, password reset). */
  async destroyForUser(userId: number): Promise<void> {
    await this.db.deleteFrom('sessions').where('user_id', '=', userId).execute()
  }

  async sweep(): Promise<void> {
    const now = Date.now()
    await this.db
      .deleteFrom('sessions')
      .where((eb) => eb.or([eb('expires_at', '<=', now), eb('created_at', '<=', now - this.absoluteMs)]))
      .execute()
  }

  close(): void {
    clearInterval(this.sweeper)
  }
}
