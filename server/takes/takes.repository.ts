import type { Db } from '../core/database'
import type { NewTake, TakeRow, TakeUpdate } from '../../db/schema'

export interface TakeJoined extends TakeRow {
  session_title: string
  uploader_name: string | null
}

export const selectTakes = (db: Db) =>
  db
    .selectFrom('takes')
    .innerJoin('capture_sessions', 'capture_sessions.id', 'takes.session_id')
    .leftJoin('users', 'users.id', 'takes.uploader_id')
    .selectAll('takes')
    .select(['capture_sessions.title as session_title', 'users.name as uploader_name'])

export const findTake = (db: Db, id: number): Promise<TakeJoined | undefined> =>
  selectTakes(db).where('takes.id', '=', id).executeTakeFirst()

export const findTakeBySha = (db: Db, sha256: string) =>
  db.selectFrom('takes').select(['id', 'filename']).where('sha256', '=', sha256).executeTakeFirst()

export const insertTake = (db: Db, take: NewTake) =>
  db.insertInto('takes').values(take).returningAll().executeTakeFirstOrThrow()

export const updateTake = (db: Db, id: number, patch: TakeUpdate) =>
  db
    .updateTable('takes')
    .set({ ...patch, updated_at: new Date().toISOString() })
    .where('id', '=', id)
    .execute()

export async function sourcesOf(db: Db, takeIds: number[]) {
  if (!takeIds.length) return []
  return db
    .selectFrom('take_sources')
    .innerJoin('sources', 'sources.id', 'take_sources.source_id')
    .select(['take_sources.take_id', 'take_sources.source_id', 'take_sources.state', 'sources.name', 'sources.kind'])
    .where('take_sources.take_id', 'in', takeIds)
    .orderBy('sources.name')
    .execute()
}

export async function tagsOf(db: Db, takeIds: number[]) {
  if (!takeIds.length) return []
  return db.selectFrom('take_tags').select(['take_id', 'tag']).where('take_id', 'in', takeIds).orderBy('tag').execute()
}

export async function addEvent(db: Db, takeId: number, userId: number | null, kind: string, summary: string) {
  await db.insertInto('take_events').values({ take_id: takeId, user_id: userId, kind, summary }).execute()
}

/** Replaces a take's tags with `tags`, touching only the rows that change. Returns what was added and removed. */
export async function replaceTags(db: Db, takeId: number, tags: string[]) {
  const current = (await db.selectFrom('take_tags').select('tag').where('take_id', '=', takeId).execute()).map(
    (r) => r.tag,
  )
  const added = tags.filter((t) => !current.includes(t))
  const removed = current.filter((t) => !tags.includes(t))
  if (removed.length)
    await db.deleteFrom('take_tags').where('take_id', '=', takeId).where('tag', 'in', removed).execute()
  if (added.length)
    await db
      .insertInto('take_tags')
      .values(added.map((tag) => ({ take_id: takeId, tag })))
      .execute()
  return { added, removed }
}

export interface LinkChange {
  added: { sourceId: number; state: string }[]
  removed: { sourceId: number; state: string }[]
  restated: { sourceId: number; from: string; to: string }[]
}

/** Replaces a take's device links with `links`, touching only the rows that change. */
export async function replaceSources(
  db: Db,
  takeId: number,
  links: { sourceId: number; state: string }[],
): Promise<LinkChange> {
  const current = await db
    .selectFrom('take_sources')
    .select(['source_id', 'state'])
    .where('take_id', '=', takeId)
    .execute()
  const change: LinkChange = { added: [], removed: [], restated: [] }
  for (const c of current) {
    const next = links.find((l) => l.sourceId === c.source_id)
    if (!next) change.removed.push({ sourceId: c.source_id, state: c.state })
    else if (next.state !== c.state) change.restated.push({ sourceId: c.source_id, from: c.state, to: next.state })
  }
  for (const l of links) if (!current.some((c) => c.source_id === l.sourceId)) change.added.push(l)
  if (change.removed.length)
    await db
      .deleteFrom('take_sources')
      .where('take_id', '=', takeId)
      .where(
        'source_id',
        'in',
        change.removed.map((r) => r.sourceId),
      )
      .execute()
  for (const r of change.restated)
    await db
      .updateTable('take_sources')
      .set({ state: r.to })
      .where('take_id', '=', takeId)
      .where('source_id', '=', r.sourceId)
      .execute()
  if (change.added.length)
    await db
      .insertInto('take_sources')
      .values(change.added.map((l) => ({ take_id: takeId, source_id: l.sourceId, state: l.state })))
      .execute()
  return change
}

/** Ids among `ids` that name no take. */
export async function missingTakeIds(db: Db, ids: number[]): Promise<number[]> {
  const found = new Set<number>()
  for (let i = 0; i < ids.length; i += 500) {
    const rows = await db
      .selectFrom('takes')
      .select('id')
      .where('id', 'in', ids.slice(i, i + 500))
      .execute()
    for (const r of rows) found.add(r.id)
  }
  return ids.filter((id) => !found.has(id))
}

export async function findTakesByIds(db: Db, ids: number[]): Promise<TakeJoined[]> {
  const out: TakeJoined[] = []
  for (let i = 0; i < ids.length; i += 500)
    out.push(
      ...(await selectTakes(db)
        .where('takes.id', 'in', ids.slice(i, i + 500))
        .execute()),
    )
  const byId = new Map(out.map((r) => [r.id, r]))
  return ids.map((id) => byId.get(id)).filter((r): r is TakeJoined => !!r)
}

export async function sourceNames(db: Db, ids: number[]): Promise<Map<number, string>> {
  if (!ids.length) return new Map()
  const rows = await db.selectFrom('sources').select(['id', 'name']).where('id', 'in', ids).execute()
  return new Map(rows.map((r) => [r.id, r.name]))
}

export async function tagCounts(db: Db, prefix: string, limit: number) {
  let q = db.selectFrom('take_tags').select((eb) => ['tag', eb.fn.countAll<number>().as('n')])
  // A range on the indexed column rather than LIKE: the prefix is taken literally.
  if (prefix) q = q.where('tag', '>=', prefix).where('tag', '<', `${prefix}\u{10FFFF}`)
  return q.groupBy('tag').orderBy('n', 'desc').orderBy('tag').limit(limit).execute()
}

export async function stateCounts(db: Db, opts: { sourceId?: number; prefix?: string; limit: number }) {
  let q = db
    .selectFrom('take_sources')
    .select((eb) => ['state', eb.fn.countAll<number>().as('n')])
    .where('state', '!=', '')
  if (opts.sourceId) q = q.where('source_id', '=', opts.sourceId)
  const rows = await q.groupBy('state').orderBy('n', 'desc').orderBy('state').execute()
  // Distinct states are few; the prefix is compared with full Unicode case folding here rather than SQLite's ASCII-only lower().
  const prefix = opts.prefix?.trim().toLocaleLowerCase()
  return (prefix ? rows.filter((r) => r.state.toLocaleLowerCase().startsWith(prefix)) : rows).slice(0, opts.limit)
}

export const eventsOf = (db: Db, takeId: number) =>
  db
    .selectFrom('take_events')
    .leftJoin('users', 'users.id', 'take_events.user_id')
    .select([
      'take_events.id',
      'take_events.kind',
      'take_events.summary',
      'take_events.user_id',
      'users.name as user_name',
      'take_events.created_at',
    ])
    .where('take_events.take_id', '=', takeId)
    .orderBy('take_events.created_at', 'desc')
    .orderBy('take_events.id', 'desc')
    .execute()
