import type { Db } from '../core/database'

/** Every tag in use with its number of takes, A to Z. */
export const allTagCounts = (db: Db) =>
  db
    .selectFrom('take_tags')
    .select((eb) => ['tag', eb.fn.countAll<number>().as('n')])
    .groupBy('tag')
    .orderBy('tag')
    .execute()

/** Which of `tags` some take carries. */
export async function tagsInUse(db: Db, tags: string[]): Promise<Set<string>> {
  const rows = await db.selectFrom('take_tags').select('tag').distinct().where('tag', 'in', tags).execute()
  return new Set(rows.map((r) => r.tag))
}

/** take id → the tags of `tags` it carries. */
export async function takesWithTags(db: Db, tags: string[]): Promise<Map<number, string[]>> {
  const rows = await db
    .selectFrom('take_tags')
    .select(['take_id', 'tag'])
    .where('tag', 'in', tags)
    .orderBy('take_id')
    .orderBy('tag')
    .execute()
  const out = new Map<number, string[]>()
  for (const r of rows) out.set(r.take_id, [...(out.get(r.take_id) ?? []), r.tag])
  return out
}

/**
 * On one take, drops `from` and makes sure it carries `into`. The take_tags
 * triggers keep the full-text index in step.
 */
export async function retag(db: Db, takeId: number, from: string[], into: string) {
  const drop = from.filter((t) => t !== into)
  if (drop.length) await db.deleteFrom('take_tags').where('take_id', '=', takeId).where('tag', 'in', drop).execute()
  await db
    .insertInto('take_tags')
    .values({ take_id: takeId, tag: into })
    .onConflict((oc) => oc.columns(['take_id', 'tag']).doNothing())
    .execute()
  await db.updateTable('takes').set({ updated_at: new Date().toISOString() }).where('id', '=', takeId).execute()
}
