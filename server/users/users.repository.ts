import type { Db } from '../core/database'
import type { NewUser, UserRow, UserUpdate } from '../../db/schema'

export const findUserById = (db: Db, id: number): Promise<UserRow | undefined> =>
  db.selectFrom('users').selectAll().where('id', '=', id).executeTakeFirst()

export const findUserByEmail = (db: Db, email: string): Promise<UserRow | undefined> =>
  db.selectFrom('users').selectAll().where('email', '=', email.toLowerCase()).executeTakeFirst()

export const listUsers = (db: Db): Promise<UserRow[]> => db.selectFrom('users').selectAll().orderBy('name').execute()

export async function insertUser(db: Db, user: NewUser): Promise<UserRow> {
  return db.insertInto('users').values(user).returningAll().executeTakeFirstOrThrow()
}

export async function updateUser(db: Db, id: number, patch: UserUpdate): Promise<UserRow | undefined> {
  return db.updateTable('users').set(patch).where('id', '=', id).returningAll().executeTakeFirst()
}

export const countUsers = async (db: Db): Promise<number> =>
  Number(
    (
      await db
        .selectFrom('users')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )
