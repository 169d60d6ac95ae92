import passport from 'passport'
import { Strategy as LocalStrategy } from 'passport-local'
import type { Db } from '../core/database'
import { dummyHash, findUserByEmail, findUserById, userRowToUser, verifyPassword } from '../users/users.service'

/** A passport instance of the app's own (not the module singleton), so several apps can live in one test process. */
export function createPassport(db: Db): passport.PassportStatic {
  const pp = new passport.Passport() as unknown as passport.PassportStatic
  pp.use(
    new LocalStrategy({ usernameField: 'email', passwordField: 'password' }, (email, password, done) => {
      ;(async () => {
        const row = await findUserByEmail(db, email.trim())
        // Same work whether or not the address exists, so timing tells nothing.
        const ok = await verifyPassword(password, row?.password_hash ?? (await dummyHash()))
        if (!row || !ok || row.active !== 1) return done(null, false)
        return done(null, userRowToUser(row))
      })().catch(done)
    }),
  )
  pp.serializeUser((user, done) => done(null, (user as Express.User).id))
  pp.deserializeUser((id: number, done) => {
    findUserById(db, id)
      .then((row) => done(null, row && row.active === 1 ? userRowToUser(row) : false))
      .catch(done)
  })
  return pp
}
