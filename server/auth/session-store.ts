import session from 'express-session'
import type { Db } from '../core/database'

const DAY = 24 * 60 * 60 * 1000

/**
 * express-session store kept in the app's own SQLite through Kysely. Written here
 * because the only ready-made better-sqlite3 store is GPL-licensed.
 */
export class SqliteSessionStore extends session.Store {
  private sweeper: NodeJS.Timeout

  constructor(private db: Db) {
    super()
    this.sweeper = setInterval(() => void this.sweep(), 60 * 60 * 1000)
    this.sweeper.unref()
  }

  override get(sid: string, cb: (err: unknown, s?: session.SessionData | null) => void): void {
    this.db
      .selectFrom('sessions')
      .select(['data', 'expires_at'])
      .where('sid', '=', sid)
      .executeTakeFirst()
      .then((row) => cb(null, row && row.expires_at > Date.now() ? JSON.parse(row.data) : null))
      .catch((err) => cb(err))
  }

  override set(sid: string, s: session.SessionData, cb?: (err?: unknown) => void): void {
    const expires = s.cookie?.expires ? new Date(s.cookie.expires).getTime() : Date.now() + DAY
    const data = JSON.stringify(s)
    this.db
      .insertInto('sessions')
      .values({ sid, data, expires_at: expires })
      .onConflict((oc) => oc.column('sid').doUpdateSet({ data, expires_at: expires }))
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
    const rows = await this.db.selectFrom('sessions').select(['sid', 'data']).execute()
    const doomed = rows.filter((r) => JSON.parse(r.data)?.passport?.user === userId).map((r) => r.sid)
    if (doomed.length) await this.db.deleteFrom('sessions').where('sid', 'in', doomed).execute()
  }

  async sweep(): Promise<void> {
    await this.db.deleteFrom('sessions').where('expires_at', '<=', Date.now()).execute()
  }

  close(): void {
    clearInterval(this.sweeper)
  }
}
