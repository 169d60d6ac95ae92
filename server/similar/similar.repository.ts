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
