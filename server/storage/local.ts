import fsp from 'node:fs/promises'
import path from 'node:path'
import { randomUUID } from 'node:crypto'
import type { Readable } from 'node:stream'
import { BlobMissingError, checkKey, type BlobStore, type ByteRange } from './storage'

/** The storage folder itself as the store: keys are paths under `root`. */
export class LocalBlobStore implements BlobStore {
  readonly kind = 'local'
  constructor(readonly root: string) {}

  private file(key: string): string {
    return path.join(this.root, checkKey(key))
  }

  async putFile(key: string, file: string): Promise<void> {
    const target = this.file(key)
    if (path.resolve(file) === path.resolve(target)) return
    await fsp.mkdir(path.dirname(target), { recursive: true })
    // Copy beside the target and rename, so a reader never sees half a file.
    const part = `${target}.${randomUUID()}.part`
    try {
      await fsp.copyFile(file, part)
      await fsp.rename(part, target)
    } finally {
      await fsp.rm(part, { force: true })
    }
  }

  async read(key: string, range?: ByteRange): Promise<Readable> {
    const file = this.file(key)
    const handle = await fsp.open(file, 'r').catch((err: NodeJS.ErrnoException) => {
      throw err.code === 'ENOENT' ? new BlobMissingError(key) : err
    })
    return handle.createReadStream({ start: range?.start, end: range?.end })
  }

  async size(key: string): Promise<number | null> {
    const st = await fsp.stat(this.file(key)).catch(() => null)
    return st?.isFile() ? st.size : null
  }

  async remove(key: string): Promise<void> {
    await fsp.rm(this.file(key), { force: true })
  }

  async list(prefix: string): Promise<string[]> {
    const dir = path.join(this.root, checkKey(prefix.replace(/\/$/, '')))
    const names = await fsp.readdir(dir, { recursive: true, withFileTypes: true }).catch(() => [])
    return names
      .filter((d) => d.isFile())
      .map((d) => path.relative(this.root, path.join(d.parentPath, d.name)).split(path.sep).join('/'))
      .sort()
  }

  async removePrefix(prefix: string): Promise<void> {
    await fsp.rm(path.join(this.root, checkKey(prefix.replace(/\/$/, ''))), { recursive: true, force: true })
  }

  async presign(): Promise<string | null> {
    return null
  }
}
