// All Kysely code of packs, items, builds, followers and share links.
import { sql } from 'kysely'
import type { Db } from '../core/database'
import type {
  NewPack,
  NewPackBuild,
  NewPackBuildItem,
  NewPackItem,
  PackBuildRow,
  PackBuildItemRow,
  PackBuildUpdate,
  PackItemRow,
  PackItemUpdate,
  PackRow,
  PackShareLinkRow,
  PackUpdate,
} from '../../db/schema-packs'

const now = () => new Date().toISOString()

export interface PackJoined extends PackRow {
  creator_name: string | null
}

const selectPacks = (db: Db) =>
  db
    .selectFrom('packs')
    .leftJoin('users', 'users.id', 'packs.created_by')
    .selectAll('packs')
    .select('users.name as creator_name')

export const findPack = (db: Db, id: number): Promise<PackJoined | undefined> =>
  selectPacks(db).where('packs.id', '=', id).executeTakeFirst()

export const listPacks = (db: Db, onlyPublished: boolean): Promise<PackJoined[]> => {
  let q = selectPacks(db)
  if (onlyPublished) {
    q = q.where((eb) =>
      eb.exists(
        eb
          .selectFrom('pack_builds')
          .select('pack_builds.id')
          .whereRef('pack_builds.pack_id', '=', 'packs.id')
          .where('pack_builds.published_at', 'is not', null),
      ),
    )
  }
  return q.orderBy('packs.updated_at', 'desc').orderBy('packs.id', 'desc').execute()
}

export const insertPack = (db: Db, pack: NewPack) =>
  db.insertInto('packs').values(pack).returning('id').executeTakeFirstOrThrow()

export const updatePack = (db: Db, id: number, patch: PackUpdate) =>
  db
    .updateTable('packs')
    .set({ ...patch, updated_at: now() })
    .where('id', '=', id)
    .execute()

export const touchPack = (db: Db, id: number) =>
  db.updateTable('packs').set({ updated_at: now() }).where('id', '=', id).execute()

export const deletePack = (db: Db, id: number) => db.deleteFrom('packs').where('id', '=', id).execute()

/** Item counts and total durations (ranges, or the whole take) per pack. */
export async function packTotals(db: Db, packIds: number[]) {
  if (!packIds.length) return []
  return db
    .selectFrom('pack_items')
    .innerJoin('takes', 'takes.id', 'pack_items.take_id')
    .select((eb) => [
      'pack_items.pack_id',
      eb.fn.countAll<number>().as('count'),
      sql<number>`sum(coalesce(pack_items.end_seconds, takes.duration_seconds, 0) - coalesce(pack_items.start_seconds, 0))`.as(
        'seconds',
      ),
    ])
    .where('pack_items.pack_id', 'in', packIds)
    .groupBy('pack_items.pack_id')
    .execute()
}

// ---- items ----

export const itemsOf = (db: Db, packId: number): Promise<PackItemRow[]> =>
  db.selectFrom('pack_items').selectAll().where('pack_id', '=', packId).orderBy('position').orderBy('id').execute()

export const findItem = (db: Db, packId: number, id: number): Promise<PackItemRow | undefined> =>
  db.selectFrom('pack_items').selectAll().where('pack_id', '=', packId).where('id', '=', id).executeTakeFirst()

export async function nextPosition(db: Db, packId: number): Promise<number> {
  const r = await db
    .selectFrom('pack_items')
    .select((eb) => eb.fn.max<number | null>('position').as('p'))
    .where('pack_id', '=', packId)
    .executeTakeFirst()
  return (r?.p ?? 0) + 1
}

export const insertItem = (db: Db, item: NewPackItem) =>
  db.insertInto('pack_items').values(item).returning('id').executeTakeFirstOrThrow()

export const updateItem = (db: Db, id: number, patch: PackItemUpdate) =>
  db
    .updateTable('pack_items')
    .set({ ...patch, updated_at: now() })
    .where('id', '=', id)
    .execute()

export const deleteItem = (db: Db, id: number) => db.deleteFrom('pack_items').where('id', '=', id).execute()

/** Rewrites positions 1..n in the given order (ids must be the pack's items). */
export async function setPositions(db: Db, packId: number, ids: number[]): Promise<void> {
  for (let i = 0; i < ids.length; i++) {
    await db
      .updateTable('pack_items')
      .set({ position: i + 1 })
      .where('pack_id', '=', packId)
      .where('id', '=', ids[i])
      .execute()
  }
}

/** What naming, metadata and validation need of each take. */
export async function takeFacts(db: Db, takeIds: number[]) {
  if (!takeIds.length) return { takes: [], sources: [], tags: [] }
  const [takes, sources, tags] = await Promise.all([
    db
      .selectFrom('takes')
      .innerJoin('capture_sessions', 'capture_sessions.id', 'takes.session_id')
      .select([
        'takes.id',
        'takes.title',
        'takes.filename',
        'takes.description',
        'takes.status',
        'takes.audio_path',
        'takes.sha256',
        'takes.duration_seconds',
        'takes.sample_rate',
        'takes.channels',
        'takes.bits_per_sample',
        'takes.integrated_lufs',
        'takes.true_peak_dbtp',
        'takes.loudness_range_lu',
        'takes.analysis_json',
        'capture_sessions.title as session_title',
        'capture_sessions.date as session_date',
      ])
      .where('takes.id', 'in', takeIds)
      .execute(),
    db
      .selectFrom('take_sources')
      .innerJoin('sources', 'sources.id', 'take_sources.source_id')
      .select(['take_sources.take_id', 'sources.name', 'sources.kind', 'take_sources.state'])
      .where('take_sources.take_id', 'in', takeIds)
      .orderBy('sources.name')
      .execute(),
    db.selectFrom('take_tags').select(['take_id', 'tag']).where('take_id', 'in', takeIds).orderBy('tag').execute(),
  ])
  return { takes, sources, tags }
}

/** Names of regions by id (regions since deleted are simply absent). */
export async function regionNames(db: Db, ids: number[]): Promise<Map<number, string>> {
  if (!ids.length) return new Map()
  const rows = await db.selectFrom('regions').select(['id', 'name']).where('id', 'in', ids).execute()
  return new Map(rows.map((r) => [r.id, r.name]))
}

export const findRegionRange = (db: Db, id: number) =>
  db
    .selectFrom('regions')
    .select(['id', 'take_id', 'name', 'start_seconds', 'end_seconds'])
    .where('id', '=', id)
    .executeTakeFirst()

// ---- builds ----

export interface BuildJoined extends PackBuildRow {
  /** The pack's name as the build froze it (what its zip and manifest carry), not the draft's. */
  pack_name: string
  creator_name: string | null
  publisher_name: string | null
}

const selectBuilds = (db: Db) =>
  db
    .selectFrom('pack_builds')
    .innerJoin('packs', 'packs.id', 'pack_builds.pack_id')
    .leftJoin('users as creator', 'creator.id', 'pack_builds.created_by')
    .leftJoin('users as publisher', 'publisher.id', 'pack_builds.published_by')
    .selectAll('pack_builds')
    .select(['creator.name as creator_name', 'publisher.name as publisher_name'])
    .select(sql<string>`coalesce(json_extract(pack_builds.snapshot_json, '$.pack.name'), packs.name)`.as('pack_name'))

export const findBuild = (db: Db, id: number): Promise<BuildJoined | undefined> =>
  selectBuilds(db).where('pack_builds.id', '=', id).executeTakeFirst()

export const buildsOf = (db: Db, packId: number, onlyPublished = false): Promise<BuildJoined[]> => {
  let q = selectBuilds(db).where('pack_builds.pack_id', '=', packId)
  if (onlyPublished) q = q.where('pack_builds.published_at', 'is not', null)
  return q.orderBy('pack_builds.version', 'desc').execute()
}

/** The newest build and the newest published build of each pack. */
export async function headlineBuilds(db: Db, packIds: number[]): Promise<BuildJoined[]> {
  if (!packIds.length) return []
  return selectBuilds(db)
    .where('pack_builds.pack_id', 'in', packIds)
    .where((eb) =>
      eb.or([
        eb(
          'pack_builds.version',
          '=',
          eb
            .selectFrom('pack_builds as b')
            .select((e) => e.fn.max('b.version').as('v'))
            .whereRef('b.pack_id', '=', 'pack_builds.pack_id'),
        ),
        eb(
          'pack_builds.version',
          '=',
          eb
            .selectFrom('pack_builds as p')
            .select((e) => e.fn.max('p.version').as('v'))
            .whereRef('p.pack_id', '=', 'pack_builds.pack_id')
            .where('p.published_at', 'is not', null),
        ),
      ]),
    )
    .execute()
}

/** Inserts the next version of a pack's builds (1, 2, 3…) in one transaction. */
export async function insertBuild(
  db: Db,
  build: Omit<NewPackBuild, 'version'>,
): Promise<{ id: number; version: number }> {
  // Inside a caller's transaction (a build request) it joins it; alone it opens its own.
  const insert = async (trx: Db) => {
    const r = await trx
      .selectFrom('pack_builds')
      .select((eb) => eb.fn.max<number | null>('version').as('v'))
      .where('pack_id', '=', build.pack_id)
      .executeTakeFirst()
    const version = (r?.v ?? 0) + 1
    const row = await trx
      .insertInto('pack_builds')
      .values({ ...build, version })
      .returning('id')
      .executeTakeFirstOrThrow()
    return { id: row.id, version }
  }
  return db.isTransaction ? insert(db) : db.transaction().execute(insert)
}

export const updateBuild = (db: Db, id: number, patch: PackBuildUpdate) =>
  db.updateTable('pack_builds').set(patch).where('id', '=', id).execute()

export const runningBuildsOf = (db: Db, packId: number) =>
  db
    .selectFrom('pack_builds')
    .select('id')
    .where('pack_id', '=', packId)
    .where('status', 'in', ['queued', 'running'])
    .execute()

export const zipPathsOf = (db: Db, packId: number) =>
  db
    .selectFrom('pack_builds')
    .select('zip_path')
    .where('pack_id', '=', packId)
    .where('zip_path', 'is not', null)
    .execute()

export const insertBuildItems = async (db: Db, rows: NewPackBuildItem[]) => {
  if (rows.length) await db.insertInto('pack_build_items').values(rows).execute()
}

export const buildItemsOf = (db: Db, buildId: number): Promise<PackBuildItemRow[]> =>
  db.selectFrom('pack_build_items').selectAll().where('build_id', '=', buildId).orderBy('position').execute()

/** The newest published build of a pack older than `version`. */
export const publishedBefore = (db: Db, packId: number, version: number): Promise<BuildJoined | undefined> =>
  selectBuilds(db)
    .where('pack_builds.pack_id', '=', packId)
    .where('pack_builds.published_at', 'is not', null)
    .where('pack_builds.version', '<', version)
    .orderBy('pack_builds.version', 'desc')
    .executeTakeFirst()

export const deleteBuildItems = (db: Db, buildId: number) =>
  db.deleteFrom('pack_build_items').where('build_id', '=', buildId).execute()

/** For each item id: its rendered numbers from the newest finished (or published) build that holds it. */
export async function latestRendered(db: Db, itemIds: number[], onlyPublished = false) {
  if (!itemIds.length) return []
  let q = db
    .selectFrom('pack_build_items')
    .innerJoin('pack_builds', 'pack_builds.id', 'pack_build_items.build_id')
    .selectAll('pack_build_items')
    .select(['pack_builds.version'])
    .where('pack_build_items.item_id', 'in', itemIds)
    .where('pack_builds.status', '=', 'done')
  if (onlyPublished) q = q.where('pack_builds.published_at', 'is not', null)
  return q.orderBy('pack_builds.version', 'desc').execute()
}

// ---- followers ----

export const follow = (db: Db, packId: number, userId: number) =>
  db
    .insertInto('pack_follows')
    .values({ pack_id: packId, user_id: userId })
    .onConflict((oc) => oc.doNothing())
    .execute()

export const unfollow = (db: Db, packId: number, userId: number) =>
  db.deleteFrom('pack_follows').where('pack_id', '=', packId).where('user_id', '=', userId).execute()

export async function followInfo(db: Db, packIds: number[], userId: number) {
  if (!packIds.length) return []
  return db
    .selectFrom('pack_follows')
    .select((eb) => [
      'pack_id',
      eb.fn.countAll<number>().as('count'),
      eb.fn.max(sql<number>`case when user_id = ${userId} then 1 else 0 end`).as('mine'),
    ])
    .where('pack_id', 'in', packIds)
    .groupBy('pack_id')
    .execute()
}

/** Active followers who may still receive packs. */
export const followersOf = (db: Db, packId: number) =>
  db
    .selectFrom('pack_follows')
    .innerJoin('users', 'users.id', 'pack_follows.user_id')
    .select(['users.id', 'users.email', 'users.name', 'users.role'])
    .where('pack_follows.pack_id', '=', packId)
    .where('users.active', '=', 1)
    .execute()

// ---- share links ----

export interface ShareLinkJoined extends PackShareLinkRow {
  creator_name: string | null
}

const selectLinks = (db: Db) =>
  db
    .selectFrom('pack_share_links')
    .leftJoin('users', 'users.id', 'pack_share_links.created_by')
    .selectAll('pack_share_links')
    .select('users.name as creator_name')

export const findShareLink = (db: Db, id: number): Promise<ShareLinkJoined | undefined> =>
  selectLinks(db).where('pack_share_links.id', '=', id).executeTakeFirst()

export const linksOf = (db: Db, buildId: number): Promise<ShareLinkJoined[]> =>
  selectLinks(db).where('pack_share_links.build_id', '=', buildId).orderBy('pack_share_links.id', 'desc').execute()

export const insertShareLink = (
  db: Db,
  row: { build_id: number; nonce: string; expires_at: string; max_downloads: number | null; created_by: number | null },
) => db.insertInto('pack_share_links').values(row).returning('id').executeTakeFirstOrThrow()

export const revokeShareLink = (db: Db, id: number) =>
  db
    .updateTable('pack_share_links')
    .set({ revoked_at: now() })
    .where('id', '=', id)
    .where('revoked_at', 'is', null)
    .execute()

/** Counts one download when the link is still usable; false when it is not (checked and counted in one statement). */
/** Counts a new download (starting at byte `from`) if the link is active and under its limit. */
export async function countDownload(db: Db, id: number, at: string, from = 0): Promise<boolean> {
  const r = await db
    .updateTable('pack_share_links')
    .set((eb) => ({ downloads: eb('downloads', '+', 1), last_download_at: at, open_download_bytes: from }))
    .where('id', '=', id)
    .where('revoked_at', 'is', null)
    .where('expires_at', '>', at)
    .where((eb) => eb.or([eb('max_downloads', 'is', null), eb('downloads', '<', eb.ref('max_downloads'))]))
    .executeTakeFirst()
  return Number(r.numUpdatedRows) === 1
}

/** How far the last counted download got (null: it reached the end of the file). */
export async function recordDownloadProgress(db: Db, id: number, reached: number | null): Promise<void> {
  await db.updateTable('pack_share_links').set({ open_download_bytes: reached }).where('id', '=', id).execute()
}
