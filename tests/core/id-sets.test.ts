// Id sets held in memory for one request (server/core/id-sets.ts), tested from
// SQL on a real SQLite connection: every id read is in the set, nothing else
// is, and a released set holds nothing.
import { afterAll, describe, expect, it } from 'vitest'
import { sql } from 'kysely'
import { openDatabase } from '../../server/core/database'
import { holdIds } from '../../server/core/id-sets'

const db = openDatabase(':memory:')
afterAll(() => db.destroy())

const inSet = async (has: (id: ReturnType<typeof sql.lit>) => ReturnType<typeof sql>, ids: number[]) =>
  Promise.all(
    ids.map(async (id) => Number((await sql<{ v: number }>`SELECT ${has(sql.lit(id))} AS v`.execute(db)).rows[0].v)),
  )

describe('holdIds', () => {
  it('holds exactly the ids its query yields, small and large, and counts them', async () => {
    const ids = [0, 1, 7, 8, 9, 255, 256, 999_999, 1_000_000, 12_345_678]
    const held = await holdIds(db, sql`SELECT value AS id FROM json_each(${JSON.stringify(ids)})`)
    expect(held.size).toBe(ids.length)
    expect(await inSet(held.has, ids)).toEqual(ids.map(() => 1))
    expect(
      await inSet(held.has, [2, 6, 10, 254, 257, 999_998, 1_000_001, 12_345_677, 12_345_679, 99_999_999, -1]),
    ).toEqual(Array(11).fill(0))
    held.release()
    expect(await inSet(held.has, ids)).toEqual(ids.map(() => 0))
  })

  it('holds nothing when the query yields nothing', async () => {
    const held = await holdIds(db, sql`SELECT 1 AS id WHERE 0`)
    expect(held.size).toBe(0)
    expect(await inSet(held.has, [0, 1])).toEqual([0, 0])
    held.release()
  })

  it('keeps two sets apart', async () => {
    const a = await holdIds(db, sql`SELECT 3 AS id`)
    const b = await holdIds(db, sql`SELECT 4 AS id`)
    expect(await inSet(a.has, [3, 4])).toEqual([1, 0])
    expect(await inSet(b.has, [3, 4])).toEqual([0, 1])
    a.release()
    b.release()
  })
})
