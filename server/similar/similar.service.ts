// "More like this": the nearest takes by feature vector, visible ones only,
// each with the region of it that matches best when one matches better than
// the whole take.
import path from 'node:path'
import type { SimilarItem, SimilarRegion } from '@shared/schemas/similar'
import type { Character } from '@shared/schemas/character'
import type { AppContext } from '../core/context'
import type { Db } from '../core/database'
import { AppError, notFound } from '../core/errors'
import { MEL_BANDS } from '../audio/character-frames'
import { melVector, type TakeFeatures } from '../audio/character'
import { findTake, findTakesByIds } from '../takes/takes.service'
import { takeRowsToTakes } from '../takes/takes.mapper'
import { SimilarIndex } from './similar-index'
import { addFrames, featuresOf, removedTakeIds, saveCharacter, type StoredFeatures } from './similar.repository'

const indexes = new WeakMap<AppContext, Promise<SimilarIndex>>()

/** The server's index, opened (or rebuilt from the database) on first use. */
export function similarIndex(ctx: AppContext): Promise<SimilarIndex> {
  let p = indexes.get(ctx)
  if (!p) {
    const index = new SimilarIndex(ctx.db, path.join(ctx.storage.root, 'derived', 'similar.hnsw'))
    p = index.open().then(() => index)
    indexes.set(ctx, p)
  }
  return p
}

/** Stores a measured take's character and features and puts it in the index. */
export async function recordCharacter(
  ctx: AppContext,
  takeId: number,
  character: Character | undefined,
  features: TakeFeatures | undefined,
): Promise<void> {
  if (!character || !features) return
  await saveCharacter(ctx.db, takeId, character, features)
  try {
    ;(await similarIndex(ctx)).add(takeId, features.vector)
  } catch {
    // The stored vector stands; the index takes it when it is next rebuilt.
  }
  // Measured again, the take's frames were replaced: its regions in the stretches between excerpts need theirs again.
  coverRegionsLater(ctx, takeId)
}

const covered = (f: StoredFeatures, start: number, end: number) => f.frameTimes.some((at) => at >= start && at < end)

/**
 * Gives each region of a take that the analysis's excerpts missed frames of its own (read from
 * its middle on the audio-task pool), so every region has a sounds-like vector. One region at a
 * time; a take not measured yet is left to its measurement, which calls this again.
 */
export async function coverRegions(ctx: AppContext, takeId: number): Promise<void> {
  const [f] = await featuresOf(ctx.db, [takeId])
  const take = f && (await findTake(ctx.db, takeId))
  if (!take) return
  const regions = await ctx.db
    .selectFrom('regions')
    .select(['start_seconds', 'end_seconds'])
    .where('take_id', '=', takeId)
    .execute()
  const missing = regions.filter((r) => !covered(f, r.start_seconds, r.end_seconds))
  if (!missing.length) return
  const path = await ctx.storage.local(take.audio_path)
  for (const r of missing) {
    const got = await ctx.heavy.rangeFrames(`regions:${takeId}`, path, r.start_seconds, r.end_seconds)
    await addFrames(ctx.db, takeId, got.frameTimes, got.frameMel, MEL_BANDS)
  }
}

const covering = new WeakMap<AppContext, Map<number, Promise<void>>>()

/**
 * coverRegions after the answer has gone; a failure leaves the region without a vector, never the request failed.
 * One at a time per take: two quick region saves would otherwise both read the same missing stretch.
 */
export function coverRegionsLater(ctx: AppContext, takeId: number): void {
  let queue = covering.get(ctx)
  if (!queue) covering.set(ctx, (queue = new Map()))
  const run = (queue.get(takeId) ?? Promise.resolve())
    .then(() => coverRegions(ctx, takeId))
    .catch((err) => console.warn(`regions of take ${takeId} got no sound frames:`, err))
  queue.set(takeId, run)
  void run.finally(() => {
    if (queue.get(takeId) === run) queue.delete(takeId)
  })
}

const distance = (a: Float32Array, b: Float32Array) => {
  let s = 0
  for (let i = 0; i < a.length; i++) s += (a[i] - b[i]) ** 2
  return s
}
const score = (squared: number) => 1 / (1 + Math.sqrt(squared))

/** The vector of a time range of a take: its frames' mel statistics with the take's own descriptors. */
export function rangeVector(f: StoredFeatures, start: number, end: number): Float32Array | null {
  const B = MEL_BANDS
  const picked: number[] = []
  for (let i = 0; i < f.frameTimes.length; i++) if (f.frameTimes[i] >= start && f.frameTimes[i] < end) picked.push(i)
  if (picked.length === 0) return null
  const mel = new Float32Array(picked.length * B)
  picked.forEach((i, j) => mel.set(f.frameMel.subarray(i * B, (i + 1) * B), j * B))
  return melVector(mel, picked.length, Array.from(f.vector.subarray(3 * B)))
}

async function bestRegions(db: Db, query: Float32Array, features: StoredFeatures[], whole: Map<number, number>) {
  const ids = features.map((f) => f.takeId)
  const regions = ids.length
    ? await db
        .selectFrom('regions')
        .select(['id', 'take_id', 'name', 'start_seconds', 'end_seconds'])
        .where('take_id', 'in', ids)
        .execute()
    : []
  const best = new Map<number, { region: SimilarRegion; d: number }>()
  for (const r of regions) {
    const f = features.find((x) => x.takeId === r.take_id)
    const v = f && rangeVector(f, r.start_seconds, r.end_seconds)
    if (!v) continue
    const d = distance(query, v)
    const current = best.get(r.take_id)
    if (d < (whole.get(r.take_id) ?? Infinity) && (!current || d < current.d))
      best.set(r.take_id, {
        region: { id: r.id, name: r.name, startSeconds: r.start_seconds, endSeconds: r.end_seconds },
        d,
      })
  }
  return best
}

export async function similarTakes(ctx: AppContext, takeId: number, limit: number): Promise<SimilarItem[]> {
  const row = await findTake(ctx.db, takeId)
  if (!row) throw notFound('take', 'TAKE_NOT_FOUND')
  const [own] = await featuresOf(ctx.db, [takeId])
  if (!own)
    throw new AppError(409, 'NOT_MEASURED', `Take ${takeId} has no sound features yet; they come with its measurement`)
  const index = await similarIndex(ctx)
  const removed = await removedTakeIds(ctx.db)
  const hits = index.search(own.vector, limit, (id) => id !== takeId && !removed.has(id))
  const rows = await findTakesByIds(
    ctx.db,
    hits.map((h) => h.takeId),
  )
  const takes = new Map((await takeRowsToTakes(ctx.db, rows, { withoutFileMetadata: true })).map((t) => [t.id, t]))
  const whole = new Map(hits.map((h) => [h.takeId, h.distance]))
  const regions = await bestRegions(ctx.db, own.vector, await featuresOf(ctx.db, [...takes.keys()]), whole)
  const items: SimilarItem[] = []
  for (const h of hits) {
    const take = takes.get(h.takeId)
    if (!take || take.status !== 'ready') continue
    const region = regions.get(h.takeId)
    items.push({ take, score: score(region ? region.d : h.distance), region: region?.region ?? null })
  }
  return items.sort((a, b) => b.score - a.score)
}
