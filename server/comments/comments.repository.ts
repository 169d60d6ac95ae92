import type { Db } from '../core/database'
import type { CommentRow, CommentUpdate, NewComment } from '../../db/schema-library'

export interface CommentJoined extends CommentRow {
  author_name: string | null
  resolver_name: string | null
}

const selectComments = (db: Db) =>
  db
    .selectFrom('comments')
    .leftJoin('users as author', 'author.id', 'comments.author_id')
    .leftJoin('users as resolver', 'resolver.id', 'comments.resolved_by')
    .selectAll('comments')
    .select(['author.name as author_name', 'resolver.name as resolver_name'])

/** A take's comments in time order (creation, then id). */
export const commentsOf = (db: Db, takeId: number): Promise<CommentJoined[]> =>
  selectComments(db)
    .where('comments.take_id', '=', takeId)
    .orderBy('comments.created_at')
    .orderBy('comments.id')
    .execute()

export const findComment = (db: Db, id: number): Promise<CommentJoined | undefined> =>
  selectComments(db).where('comments.id', '=', id).executeTakeFirst()

export const insertComment = (db: Db, c: NewComment) =>
  db.insertInto('comments').values(c).returning('id').executeTakeFirstOrThrow()

export const updateComment = (db: Db, id: number, patch: CommentUpdate) =>
  db.updateTable('comments').set(patch).where('id', '=', id).execute()

/** Active team members, the people a comment can mention. */
export const activeMembers = (db: Db) =>
  db.selectFrom('users').select(['id', 'name', 'email']).where('active', '=', 1).orderBy('id').execute()
