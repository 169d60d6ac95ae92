// The approximate nearest-neighbour index of take vectors (hnswlib-node, HNSW
// on squared L2 distance), one per server. Labels are take ids. It grows as
// takes are measured (a re-measured take replaces its point), is written to
// storage a few seconds after the last change, and is rebuilt from the
// database's vectors at start when the file is missing or does not match.
import fs from 'node:fs'
import path from 'node:path'
import { createRequire } from 'node:module'
import type { HierarchicalNSW as Hnsw } from 'hnswlib-node'
import type { Db } from '../core/database'
import { allVectors } from './similar.repository'

// hnswlib-node is a CommonJS native addon.
const { HierarchicalNSW } = createRequire(import.meta.url)('hnswlib-node') as typeof import('hnswlib-node')

const INITIAL_CAPACITY = 1024
const SAVE_AFTER_MS = 5000
/** Search breadth: recall well above 0.95 at 50,000 points for this dimension, in a few ms. */
const EF_SEARCH = 64

export interface Neighbour {
  takeId: number
  distance: number
}

export class SimilarIndex {
  private index: Hnsw | null = null
  private dim = 0
  private saveTimer: NodeJS.Timeout | null = null

  constructor(
    private readonly db: Db,
    private readonly file: string,
  ) {}

  /** Loads the stored index, or rebuilds it from the database when it is missing or stale. */
  async open(): Promise<void> {
    const rows = await allVectors(this.db)
    if (rows.length === 0) return
    this.dim = rows[0].vector.length
    const loaded = this.tryLoad(rows.length)
    if (loaded) {
      this.index = loaded
      return
    }
    const index = this.create(rows.length)
    for (const r of rows) if (r.vector.length === this.dim) index.addPoint(Array.from(r.vector), r.takeId)
    this.index = index
    this.scheduleSave()
  }

  private tryLoad(expected: number): Hnsw | null {
    if (!fs.existsSync(this.file)) return null
    try {
      const index = new HierarchicalNSW('l2', this.dim)
      index.readIndexSync(this.file, true)
      if (index.getCurrentCount() !== expected) return null
      index.setEf(EF_SEARCH)
      return index
    } catch {
      return null // unreadable (another version, cut short): rebuilt from the database
    }
  }

  private create(count: number): Hnsw {
    const index = new HierarchicalNSW('l2', this.dim)
    index.initIndex(Math.max(INITIAL_CAPACITY, count * 2), 16, 200, 100, true)
    index.setEf(EF_SEARCH)
    return index
  }

  /** Adds or replaces a take's point. */
  add(takeId: number, vector: Float32Array): void {
    if (!this.index) {
      this.dim = vector.length
      this.index = this.create(INITIAL_CAPACITY)
    }
    if (vector.length !== this.dim) return
    const index = this.index
    if (index.getCurrentCount() >= index.getMaxElements()) index.resizeIndex(index.getMaxElements() * 2)
    index.addPoint(Array.from(vector), takeId, true)
    this.scheduleSave()
  }

  remove(takeId: number): void {
    try {
      this.index?.markDelete(takeId)
      this.scheduleSave()
    } catch {
      // not in the index
    }
  }

  /** The k nearest takes for which `allow` holds, nearest first. */
  search(vector: Float32Array, k: number, allow: (takeId: number) => boolean): Neighbour[] {
    const index = this.index
    if (!index || vector.length !== this.dim || index.getCurrentCount() === 0) return []
    const n = Math.min(k, index.getCurrentCount())
    const { neighbors, distances } = index.searchKnn(Array.from(vector), n, allow)
    return neighbors.map((takeId, i) => ({ takeId, distance: distances[i] }))
  }

  get size(): number {
    return this.index?.getCurrentCount() ?? 0
  }

  private scheduleSave(): void {
    if (this.saveTimer) clearTimeout(this.saveTimer)
    this.saveTimer = setTimeout(() => this.save(), SAVE_AFTER_MS)
    this.saveTimer.unref()
  }

  /** Written beside and renamed into place, so a crash leaves the old file or the new one. */
  save(): void {
    if (this.saveTimer) clearTimeout(this.saveTimer)
    this.saveTimer = null
    if (!this.index) return
    fs.mkdirSync(path.dirname(this.file), { recursive: true })
    const tmp = `${this.file}.${process.pid}.tmp`
    this.index.writeIndexSync(tmp)
    fs.renameSync(tmp, this.file)
  }

  close(): void {
    if (this.saveTimer) this.save()
  }
}
