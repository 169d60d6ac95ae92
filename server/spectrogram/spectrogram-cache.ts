// The spectrogram images kept on disk, beside each take's other derived files
// (derived/take-<id>/spectrogram-*.png). Bounded two ways, least recently used
// first (a hit touches the file's time): at most `perTake` images per take, and
// at most `totalBytes` for all of them together. The total is tracked in memory
// (built from one scan of derived/ at first use and again at most every ten
// minutes, so files removed with their take drop out of it).
import fs from 'node:fs'
import path from 'node:path'
import { randomUUID } from 'node:crypto'

const RESCAN_MS = 10 * 60 * 1000
const isImage = (name: string) => name.startsWith('spectrogram-') && name.endsWith('.png')

interface Entry {
  size: number
  usedAt: number
}

export class SpectrogramCache {
  private index = new Map<string, Entry>()
  private scannedAt = 0

  constructor(
    private derivedRoot: string,
    private limits: { perTake: number; totalBytes: number },
  ) {}

  /** The cached image, touched as just used; null when there is none. */
  async read(file: string): Promise<Buffer | null> {
    try {
      const bytes = await fs.promises.readFile(file)
      const now = new Date()
      await fs.promises.utimes(file, now, now).catch(() => undefined)
      this.index.set(file, { size: bytes.length, usedAt: now.getTime() })
      return bytes
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code === 'ENOENT') return null
      throw err
    }
  }

  /** Keeps `bytes` as `file` (written beside it and renamed, so readers never see half an image), then trims. */
  async write(file: string, bytes: Buffer): Promise<void> {
    const tmp = `${file}.${randomUUID()}.tmp`
    try {
      await fs.promises.writeFile(tmp, bytes)
      await fs.promises.rename(tmp, file)
    } catch (err) {
      await fs.promises.rm(tmp, { force: true })
      throw err
    }
    await this.rescanIfDue()
    this.index.set(file, { size: bytes.length, usedAt: Date.now() })
    await this.trimTake(path.dirname(file), file)
    await this.trimTotal(file)
  }

  /** Bytes of all cached images, as tracked. */
  totalBytes(): number {
    let n = 0
    for (const e of this.index.values()) n += e.size
    return n
  }

  private async trimTake(dir: string, keep: string): Promise<void> {
    const names = (await fs.promises.readdir(dir)).filter(isImage)
    if (names.length <= this.limits.perTake) return
    const files = await Promise.all(
      names.map(async (n) => {
        const f = path.join(dir, n)
        return { f, t: f === keep ? Infinity : ((await fs.promises.stat(f).catch(() => null))?.mtimeMs ?? 0) }
      }),
    )
    files.sort((a, b) => b.t - a.t)
    for (const { f } of files.slice(this.limits.perTake)) await this.remove(f)
  }

  private async trimTotal(keep: string): Promise<void> {
    let total = this.totalBytes()
    if (total <= this.limits.totalBytes) return
    const oldest = [...this.index.entries()].filter(([f]) => f !== keep).sort((a, b) => a[1].usedAt - b[1].usedAt)
    for (const [f, e] of oldest) {
      if (total <= this.limits.totalBytes) break
      await this.remove(f)
      total -= e.size
    }
  }

  private async remove(file: string): Promise<void> {
    await fs.promises.rm(file, { force: true })
    this.index.delete(file)
  }

  private async rescanIfDue(): Promise<void> {
    if (Date.now() - this.scannedAt < RESCAN_MS) return
    this.scannedAt = Date.now()
    const fresh = new Map<string, Entry>()
    const dirs = await fs.promises.readdir(this.derivedRoot).catch(() => [] as string[])
    for (const d of dirs) {
      const names = await fs.promises.readdir(path.join(this.derivedRoot, d)).catch(() => [] as string[])
      for (const n of names.filter(isImage)) {
        const f = path.join(this.derivedRoot, d, n)
        const st = await fs.promises.stat(f).catch(() => null)
        if (st) fresh.set(f, { size: st.size, usedAt: st.mtimeMs })
      }
    }
    this.index = fresh
  }
}
