import fs from 'node:fs'
import fsp from 'node:fs/promises'
import path from 'node:path'
import { randomUUID } from 'node:crypto'
import { pipeline } from 'node:stream/promises'
import type { BlobStore } from './storage'
import { LocalBlobStore } from './local'
import { parseS3Url, s3Client, S3BlobStore } from './s3'

/**
 * The app's files. `root` (STRAYFIELD_STORAGE) is always a local folder:
 *   incoming/<uuid>.part          uploads while they stream in
 *   tus/…                         resumable uploads in progress (local mode)
 *   audio/<sha[0..2]>/<sha>.wav   take audio, named by content
 *   derived/take-<id>/…           waveform overview, spectrograms
 *   builds/…                      pack builds (zips)
 * Only keys relative to the root are kept in the database. With the local store the folder is
 * where files live for good; with S3 (STORAGE_URL=s3://…) the bucket is, and the folder is a
 * working copy: analysis and rendering read WAVs by path with random access, so `local(key)`
 * fetches a stored file here whole before such work, and `persist(key)` sends a file written
 * here to the bucket.
 */
export class Storage {
  private fetching = new Map<string, Promise<string>>()

  constructor(
    readonly root: string,
    readonly blobs: BlobStore = new LocalBlobStore(root),
  ) {
    for (const d of ['incoming', 'audio', 'derived', 'builds']) fs.mkdirSync(path.join(root, d), { recursive: true })
  }

  /** True when the files live in S3 and this folder is only a working copy. */
  get remote(): boolean {
    return this.blobs.kind !== 'local'
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
    return path.posix.join('audio', sha256.slice(0, 2), `${sha256}.wav`)
  }

  derivedRelative(takeId: number): string {
    return `derived/take-${takeId}`
  }

  derivedDir(takeId: number): string {
    const d = this.abs(this.derivedRelative(takeId))
    fs.mkdirSync(d, { recursive: true })
    return d
  }

  peaksRelative(takeId: number): string {
    return `${this.derivedRelative(takeId)}/peaks.bin`
  }

  peaksPath(takeId: number): string {
    this.derivedDir(takeId)
    return this.abs(this.peaksRelative(takeId))
  }

  /**
   * A local path holding the stored file `key`. Locally that is the file itself; with S3 the
   * object is fetched whole into the working copy first (once, however many ask at a time) and
   * kept there: audio and builds are named by content or build and never change in place.
   */
  async local(key: string): Promise<string> {
    const target = this.abs(key)
    if (!this.remote || fs.existsSync(target)) return target
    let pending = this.fetching.get(key)
    if (!pending) {
      pending = this.fetch(key, target).finally(() => this.fetching.delete(key))
      this.fetching.set(key, pending)
    }
    return pending
  }

  private async fetch(key: string, target: string): Promise<string> {
    await fsp.mkdir(path.dirname(target), { recursive: true })
    const part = `${target}.${randomUUID()}.fetch`
    try {
      await pipeline(await this.blobs.read(key), fs.createWriteStream(part, { flags: 'wx' }))
      await fsp.rename(part, target)
    } finally {
      await fsp.rm(part, { force: true })
    }
    return target
  }

  /** Sends the file written at abs(key) to the store (nothing to do locally). */
  async persist(key: string): Promise<void> {
    if (this.remote) await this.blobs.putFile(key, this.abs(key))
  }

  /** Stores a local file under `key` without moving it (nothing to do locally: the caller renames it there). */
  async upload(key: string, file: string): Promise<void> {
    if (this.remote) await this.blobs.putFile(key, file)
  }

  /** Whether `key` is stored (in the bucket with S3). */
  async exists(key: string): Promise<boolean> {
    return (await this.blobs.size(key)) !== null
  }

  /** Deletes a stored file and its working copy. */
  async remove(key: string): Promise<void> {
    await fsp.rm(this.abs(key), { force: true })
    if (this.remote) await this.blobs.remove(key)
  }

  /** Deletes every stored file under a folder key ("derived/take-7") and its working copy. */
  async removeDir(key: string): Promise<void> {
    await fsp.rm(this.abs(key), { recursive: true, force: true })
    if (this.remote) await this.blobs.removePrefix(`${key}/`)
  }

  /** Removes leftovers of uploads that were cut off by a crash. */
  sweepIncoming(): void {
    const dir = path.join(this.root, 'incoming')
    for (const f of fs.readdirSync(dir)) fs.rmSync(path.join(dir, f), { force: true })
  }
}

export interface StorageSettings {
  storageDir: string
  storageUrl: string | null
  s3Endpoint: string | null
  s3Region: string | null
}

/** The local folder, or S3 when STORAGE_URL is an s3:// URL. */
export function openStorage(settings: StorageSettings): Storage {
  if (!settings.storageUrl) return new Storage(settings.storageDir)
  const where = parseS3Url(settings.storageUrl)
  const client = s3Client({ endpoint: settings.s3Endpoint, region: settings.s3Region })
  return new Storage(settings.storageDir, new S3BlobStore(client, where))
}
