import fs from 'node:fs'
import path from 'node:path'
import { randomUUID } from 'node:crypto'

/**
 * The layout of STRAYFIELD_STORAGE:
 *   incoming/<uuid>.part          uploads while they stream in
 *   audio/<sha[0..2]>/<sha>.wav   take audio, named by content
 *   derived/take-<id>/…           waveform overview, spectrogram
 *   builds/…                      pack builds (zips)
 * Only paths relative to the storage root are kept in the database.
 */
export class Storage {
  constructor(readonly root: string) {
    for (const d of ['incoming', 'audio', 'derived', 'builds']) fs.mkdirSync(path.join(root, d), { recursive: true })
  }

  abs(relative: string): string {
    const p = path.resolve(this.root, relative)
    if (!p.startsWith(path.resolve(this.root) + path.sep)) throw new Error(`path escapes storage: ${relative}`)
    return p
  }

  incomingPath(): string {
    return path.join(this.root, 'incoming', `${randomUUID()}.part`)
  }

  audioRelative(sha256: string): string {
    return path.join('audio', sha256.slice(0, 2), `${sha256}.wav`)
  }

  derivedDir(takeId: number): string {
    const d = path.join(this.root, 'derived', `take-${takeId}`)
    fs.mkdirSync(d, { recursive: true })
    return d
  }

  peaksPath(takeId: number): string {
    return path.join(this.derivedDir(takeId), 'peaks.bin')
  }

  /** Removes leftovers of uploads that were cut off by a crash. */
  sweepIncoming(): void {
    const dir = path.join(this.root, 'incoming')
    for (const f of fs.readdirSync(dir)) fs.rmSync(path.join(dir, f), { force: true })
  }
}
