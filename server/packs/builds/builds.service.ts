// Builds: asked for (frozen snapshot + durable job), listed, published (mail to
// followers) and downloaded. Producers see and download published builds only;
// an unpublished one answers 404 to them, like a missing id.
import type { User } from '@shared/schemas/auth'
import type { BuildChanges, PackBuild } from '@shared/schemas/packs'
import { can } from '@shared/permissions'
import type { AppContext } from '../../core/context'
import { AppError } from '../../core/errors'
import { nowIso } from '../../core/time'
import { packPublishedMail } from '../../mail/messages'
import { buildToApi } from './builds.mapper'
import { computeChanges } from './changes'
import { snapshotOf } from './published'
import { tooLongItem, tooLongText, type BuildSnapshot } from '../curation/item-spec'
import { round2 } from '../../render/settings'
import * as repo from '../packs.repository'
import { itemSpecs, managedPack, managesPacks, parseSettingsOf, visiblePack } from '../curation/packs.service'

export const buildNotFound = () => new AppError(404, 'BUILD_NOT_FOUND', 'No pack build with that id')

export async function visibleBuild(ctx: AppContext, user: User, id: number): Promise<repo.BuildJoined> {
  const b = await repo.findBuild(ctx.db, id)
  if (!b || (!managesPacks(user) && !b.published_at)) throw buildNotFound()
  return b
}

export async function requestBuild(ctx: AppContext, user: User, packId: number): Promise<PackBuild> {
  const pack = await managedPack(ctx.db, packId)
  const rows = await repo.itemsOf(ctx.db, packId)
  if (!rows.length) throw new AppError(409, 'PACK_EMPTY', 'Add at least one item before building the pack')
  const specs = await itemSpecs(ctx.db, pack, rows)
  const unready = specs.find((s) => s.take.status !== 'ready')
  if (unready) {
    throw new AppError(
      409,
      'TAKE_NOT_READY',
      `item ${unready.spec.position} (${unready.spec.outputName}): take ${unready.take.id} is ${unready.take.status}`,
      {
        takeId: unready.take.id,
      },
    )
  }
  const long = tooLongItem(specs.map((s) => s.spec))
  if (long) {
    throw new AppError(409, 'ITEM_TOO_LONG', tooLongText(long), {
      itemId: long.spec.itemId,
      seconds: round2(long.seconds),
      maxSeconds: long.maxSeconds,
    })
  }
  const snapshot: BuildSnapshot = {
    pack: {
      id: pack.id,
      name: pack.name,
      description: pack.description,
      licenceText: pack.licence_text,
      namingTemplate: pack.naming_template,
      settings: parseSettingsOf(pack),
    },
    items: specs.map((s) => s.spec),
  }
  // One unit of work: a crash between these writes must not leave a queued build no job will run.
  const id = await ctx.db.transaction().execute(async (trx) => {
    const { id } = await repo.insertBuild(trx, {
      pack_id: packId,
      snapshot_json: JSON.stringify(snapshot),
      item_count: specs.length,
      created_by: user.id,
    })
    const jobId = await ctx.jobs.enqueue(trx, 'build-pack', id)
    await repo.updateBuild(trx, id, { job_id: jobId })
    return id
  })
  ctx.jobs.kick()
  return buildToApi((await repo.findBuild(ctx.db, id))!)
}

export async function listBuilds(ctx: AppContext, user: User, packId: number): Promise<PackBuild[]> {
  await visiblePack(ctx.db, user, packId)
  return (await repo.buildsOf(ctx.db, packId, !managesPacks(user))).map(buildToApi)
}

/** What a build changes against the newest version published before it. */
export async function buildChanges(ctx: AppContext, id: number): Promise<BuildChanges> {
  const b = await repo.findBuild(ctx.db, id)
  if (!b) throw buildNotFound()
  const prev = await repo.publishedBefore(ctx.db, b.pack_id, b.version)
  return computeChanges(prev ? snapshotOf(prev) : null, snapshotOf(b), prev?.version ?? null)
}

/** Publishes a finished build with its "what changed" note (again: no change, no second mail) and mails the pack's followers. */
export async function publishBuild(ctx: AppContext, user: User, id: number, note?: string): Promise<PackBuild> {
  const b = await repo.findBuild(ctx.db, id)
  if (!b) throw buildNotFound()
  if (b.status !== 'done')
    throw new AppError(
      409,
      'BUILD_NOT_DONE',
      `Version ${b.version} is ${b.status}; only a finished build can be published`,
    )
  if (b.published_at) return buildToApi(b)
  const changeNote = note?.trim() ? note.trim() : null
  await repo.updateBuild(ctx.db, id, { published_at: nowIso(), published_by: user.id, change_note: changeNote })
  const followers = (await repo.followersOf(ctx.db, b.pack_id)).filter((f) =>
    can(f.role as User['role'], 'packs:receive'),
  )
  const link = `${ctx.config.publicUrl}/packs/${b.pack_id}`
  // Mail goes out after the answer; a mail server that is down must not undo a publication.
  void (async () => {
    for (const f of followers) {
      await ctx.mailer
        .send(packPublishedMail(f.email, b.pack_name, b.version, link, changeNote))
        .catch((err: unknown) => {
          console.error(`[packs] could not mail ${f.email} about pack ${b.pack_id} v${b.version}`, err)
        })
    }
  })()
  return buildToApi((await repo.findBuild(ctx.db, id))!)
}

/** The zip of a finished build the user may download. */
export async function buildZip(
  ctx: AppContext,
  user: User,
  id: number,
): Promise<{ key: string; build: repo.BuildJoined }> {
  const b = await visibleBuild(ctx, user, id)
  if (b.status !== 'done' || !b.zip_path)
    throw new AppError(
      409,
      'BUILD_NOT_DONE',
      `Version ${b.version} is ${b.status}; it can be downloaded once it is done`,
    )
  return { key: b.zip_path, build: b }
}

/** Deletes a pack with its builds' zips; refused while one of its builds is queued or running. */
export async function deletePackAndBuilds(ctx: AppContext, packId: number): Promise<void> {
  await managedPack(ctx.db, packId)
  if ((await repo.runningBuildsOf(ctx.db, packId)).length) {
    throw new AppError(
      409,
      'BUILD_RUNNING',
      'A build of this pack is queued or running; delete the pack once it has ended',
    )
  }
  const zips = await repo.zipPathsOf(ctx.db, packId)
  await repo.deletePack(ctx.db, packId)
  for (const z of zips) if (z.zip_path) await ctx.storage.remove(z.zip_path)
}
