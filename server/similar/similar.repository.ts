import type { Character } from '@shared/schemas/character'
import type { TakeFeatures } from '../audio/character'
import type { Db } from '../core/database'

const toBlob = (a: Float32Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength)
/** A copy: SQLite's buffers need not be 4-byte aligned. */
const fromBlob = (b: Buffer) => {
  const copy = new Uint8Array(b.byteLength)
  copy.set(b)
  return new Float32Array(copy.buffer)
}

/** Replaces a take's character tags and features (one transaction: the caller's). */
export async function saveCharacter(db: Db, takeId: number, character: Character, features: TakeFeatures) {
  await db.deleteFrom('take_character').where('take_id', '=', takeId).execute()
  if (character.tags.length)
    await db
      .insertInto('take_character')
      .values(character.tags.map((t) => ({ take_id: takeId, tag: t.tag, confidence: t.confidence })))
      .execute()
  const row = {
    take_id: takeId,
    vector: toBlob(features.vector),
    frame_times: toBlob(features.frameTimes),
    frame_mel: toBlob(features.frameMel),
  }
  await db
    .insertInto('take_features')
    .values(row)
    .onConflict((oc) => oc.column('take_id').doUpdateSet({ ...row, updated_at: new Date().toISOString() }))
    .execute()
}

export async function allVectors(db: Db): Promise<{ takeId: number; vector: Float32Array }[]> {
  const rows = await db.selectFrom('take_features').select(['take_id', 'vector']).execute()
  return rows.map((r) => ({ takeId: r.take_id, vector: fromBlob(r.vector) }))
}

export interface StoredFeatures {
  takeId: number
  vector: Float32Array
  frameTimes: Float32Array
  frameMel: Float32Array
}

export async function featuresOf(db: Db, takeIds: number[]): Promise<StoredFeatures[]> {
  if (takeIds.length === 0) return []
  const rows = await db.selectFrom('take_features').selectAll().where('take_id', 'in', takeIds).execute()
  return rows.map((r) => ({
    takeId: r.take_id,
    vector: fromBlob(r.vector),
    frameTimes: fromBlob(r.frame_times),
    frameMel: fromBlob(r.frame_mel),
  }))
}

/** Ids of takes in the Removed list. */
export async function removedTakeIds(db: Db): Promise<Set<number>> {
  const rows = await db.selectFrom('take_removals').select('take_id').execute()
  return new Set(rows.map((r) => r.take_id))
}

/**
 * Adds frames of a stretch the excerpts missed to a take's stored frames, in time order (one
 * transaction, so two regions covered at once both keep theirs). The take's own vector is unchanged.
 */
export async function addFrames(db: Db, takeId: number, times: number[], mel: number[], bands: number) {
  await db.transaction().execute(async (trx) => {
    const [f] = await featuresOf(trx, [takeId])
    if (!f) return
    const all = [
      ...Array.from(f.frameTimes, (at, i) => ({ at, mel: f.frameMel.subarray(i * bands, (i + 1) * bands) })),
      ...times.map((at, i) => ({ at, mel: Float32Array.from(mel.slice(i * bands, (i + 1) * bands)) })),
    ].sort((a, b) => a.at - b.at)
    const frameMel = new Float32Array(all.length * bands)
    all.forEach((x, i) => frameMel.set(x.mel, i * bands))
    await trx
      .updateTable('take_features')
      .set({ frame_times: toBlob(Float32Array.from(all, (x) => x.at)), frame_mel: toBlob(frameMel) })
      .where('take_id', '=', takeId)
      .execute()
  })
}
