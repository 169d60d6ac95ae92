// The `similar` row of `npm run bench:library`: every seeded take gets a sounds-like vector
// (clustered like real families: 40 kinds of sound, each member a centre plus spread) and
// character tags, then `GET /api/takes/:id/similar?limit=20` is timed for takes picked at random.
// The server opens its HNSW index (rebuilt from the 50,000 stored vectors) during the warm-up.
import type { Db } from '../server/core/database'
import { MEL_BANDS } from '../server/audio/character-frames'
import { CHARACTER_TAGS } from '../shared/schemas/character'
import { prng } from '../server/audio/synth'

const DIM = 3 * MEL_BANDS + 13
const KINDS = 40

export async function seedSimilar(db: Db): Promise<void> {
  const rand = prng(77)
  const centres = Array.from({ length: KINDS }, () => Float32Array.from({ length: DIM }, () => rand() * 2 - 1))
  const ids = (await db.selectFrom('takes').select('id').execute()).map((r) => r.id)
  const empty = Buffer.alloc(0)
  for (let i = 0; i < ids.length; i += 2000) {
    await db.transaction().execute(async (trx) => {
      const chunk = ids.slice(i, i + 2000)
      const features = chunk.map((id) => {
        const kind = centres[id % KINDS]
        const v = Float32Array.from(kind, (c) => c + (rand() - 0.5) * 0.6)
        return { take_id: id, vector: Buffer.from(v.buffer), frame_times: empty, frame_mel: empty }
      })
      await trx.insertInto('take_features').values(features).execute()
      const tags = chunk.map((id) => ({
        take_id: id,
        tag: CHARACTER_TAGS[id % CHARACTER_TAGS.length],
        confidence: 0.5 + rand() / 2,
      }))
      await trx.insertInto('take_character').values(tags).execute()
    })
  }
}

export interface Row {
  name: string
  qs: string
  p50: number
  p95: number
  matches: number
}

/** Times the similar route for RUNS takes picked at random (after WARMUP requests). */
export async function similarRow(
  base: string,
  headers: Record<string, string>,
  takes: number,
  runs: number,
  warmup: number,
  quantile: (xs: number[], p: number) => number,
): Promise<Row> {
  const rand = prng(99)
  const times: number[] = []
  let matches = 0
  for (let i = 0; i < warmup + runs; i++) {
    const id = 1 + Math.floor(rand() * takes)
    const t0 = performance.now()
    const res = await fetch(`${base}/api/takes/${id}/similar?limit=20`, { headers })
    const body = (await res.json()) as { items?: unknown[] }
    const ms = performance.now() - t0
    if (res.status === 404) {
      i-- // an id the seed did not use
      continue
    }
    if (res.status !== 200) throw new Error(`similar: ${res.status} ${JSON.stringify(body)}`)
    matches = body.items?.length ?? 0
    if (i >= warmup) times.push(ms)
  }
  return {
    name: 'similar: more like this (20 nearest)',
    qs: 'GET /api/takes/:id/similar?limit=20',
    p50: quantile(times, 0.5),
    p95: quantile(times, 0.95),
    matches,
  }
}
