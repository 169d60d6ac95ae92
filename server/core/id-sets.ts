import type SQLite from 'better-sqlite3'
import { sql, type RawBuilder } from 'kysely'
import type { Db } from './database'

/**
 * Sets of row ids held in memory for the length of one request, tested from
 * SQL as `in_id_set(key, id)`.
 *
 * Why not `id IN (SELECT ...)`: SQLite builds a b-tree of the whole list in
 * every statement that tests it, about 100 ns per id (15 ms for the 168,000
 * takes a common word matches in a million). A bitmap is filled once per
 * request, in a third of that time, and each test is a bit read.
 */
const sets = new Map<number, Uint8Array>()
let nextKey = 1

/** Adds `in_id_set(key, id)` to a connection (server/core/database.ts does, on open). */
export function addIdSetFunction(sqlite: SQLite.Database) {
  sqlite.function('in_id_set', { deterministic: false }, (key: unknown, id: unknown) => {
    const bits = sets.get(Number(key))
    const n = Number(id)
    return bits && n >= 0 && n >> 3 < bits.length && (bits[n >> 3] >> (n & 7)) & 1 ? 1 : 0
  })
}

export interface HeldIds {
  /** How many ids the set holds. */
  size: number
  /** SQL that is true when `id` is in the set. */
  has: (id: RawBuilder<unknown>) => RawBuilder<unknown>
  /** Frees the set; `has` must not run after. */
  release: () => void
}

/**
 * Reads the ids a query yields (a SELECT of non-negative integer `id`) into a
 * set. The ids cross from SQLite as one comma-separated string, which is
 * several times quicker than a row per id through the driver.
 */
export async function holdIds(db: Db, ids: RawBuilder<unknown>): Promise<HeldIds> {
  const r = await sql<{ list: string | null; top: number | null }>`SELECT group_concat(id) AS list, max(id) AS top
    FROM (${ids})`.execute(db)
  const { list, top } = r.rows[0]
  const bits = new Uint8Array((Number(top ?? 0) >> 3) + 1)
  let size = 0
  if (list) {
    let n = 0
    for (let i = 0; i <= list.length; i++) {
      const c = i < list.length ? list.charCodeAt(i) : 44
      if (c === 44) {
        bits[n >> 3] |= 1 << (n & 7)
        size++
        n = 0
      } else n = n * 10 + c - 48
    }
  }
  const key = nextKey++
  sets.set(key, bits)
  return {
    size,
    has: (id) => sql`in_id_set(${key}, ${id})`,
    release: () => sets.delete(key),
  }
}
