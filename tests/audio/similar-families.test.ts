// Sounds-like search on families of synthetic variants: each family is one kind
// of signal (tests/audio/character-signals.ts) with its parameters and noise
// varied per member. Through the same HNSW index the server uses, every member's
// five nearest neighbours must hold at least four of its own family.
import os from 'node:os'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { SimilarIndex } from '../../server/similar/similar-index'
import { characterOf, SOUND_FAMILIES, soundMember } from './character-signals'

const MEMBERS = 10

describe('sounds-like families', () => {
  it('for each member, at least 4 of its 5 nearest neighbours are of its family', () => {
    const index = new SimilarIndex(null as never, path.join(os.tmpdir(), `similar-${process.pid}.hnsw`))
    const family = new Map<number, string>()
    const vectors = new Map<number, Float32Array>()
    let id = 1
    for (const name of Object.keys(SOUND_FAMILIES))
      for (let seed = 1; seed <= MEMBERS; seed++, id++) {
        const v = characterOf(soundMember(name, seed)).features.vector
        family.set(id, name)
        vectors.set(id, v)
        index.add(id, v)
      }
    const rows: Record<string, { members: number; worst: number; mean: number }> = {}
    const failures: string[] = []
    for (const [takeId, v] of vectors) {
      const name = family.get(takeId)!
      const near = index.search(v, 5, (other) => other !== takeId)
      const same = near.filter((n) => family.get(n.takeId) === name).length
      const row = (rows[name] ??= { members: 0, worst: 5, mean: 0 })
      row.members++
      row.worst = Math.min(row.worst, same)
      row.mean += same / MEMBERS
      if (same < 4) failures.push(`${name} #${takeId}: ${near.map((n) => family.get(n.takeId)).join(', ')}`)
    }
    console.log('Own family among the 5 nearest, per family')
    console.table(rows)
    expect(failures).toEqual([])
  }, 600_000)
})
