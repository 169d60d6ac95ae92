import type { Db } from '../core/database'

/** Members who can be mentioned: the active ones (the same set the comment mail goes to). */
export const mentionableMembers = (db: Db) =>
  db.selectFrom('users').select(['id', 'name', 'email']).where('active', '=', 1).orderBy('name').execute()
