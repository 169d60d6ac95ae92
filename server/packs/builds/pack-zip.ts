// The zip of a build, written by archiver with every entry stored (WAV noise
// does not compress, so deflating would cost time for nothing). archiver moves
// to ZIP64 records by itself once an entry, an offset or the central directory
// passes 4 GiB (compress-commons' isZip64), so forceZip64 is not needed.
// The zip goes to a temp name beside its final place and is renamed there only
// after it is complete and fsynced; the SHA-256 of each entry and of the whole
// zip is computed on the bytes as they stream through. While the build runs,
// the zip is fdatasynced every SYNC_EVERY bytes in the background, so the disk
// writes overlap the renders and the final fsync finds little left to write.
// Stored entries get their CRC-32 from Node's native zlib.crc32 instead of the
// pure-JS one compress-commons uses (same values, a fraction of the time); see
// useNativeCrc.
import { createHash } from 'node:crypto'
import { createReadStream, createWriteStream, fdatasync } from 'node:fs'
import { open, rename, rm, stat } from 'node:fs/promises'
import { PassThrough, Transform, type TransformCallback } from 'node:stream'
import * as zlib from 'node:zlib'
import { ZipArchive } from 'archiver'
import type { ManifestItem } from '@shared/schemas/packs'
import { csvCell } from '../../core/csv'

/** Read size of each entry's file (smaller chunks: less memory in flight between the streams). */
const READ_CHUNK = 256 * 1024
/** Background fdatasync interval of the zip. */
const SYNC_EVERY = 64 * 1024 * 1024

class Hashing extends Transform {
  readonly hash = createHash('sha256')
  bytes = 0
  constructor(private readonly onBytes?: (n: number) => void) {
    super()
  }
  override _transform(chunk: Buffer, _enc: BufferEncoding, cb: TransformCallback): void {
    this.hash.update(chunk)
    this.bytes += chunk.length
    this.onBytes?.(chunk.length)
    cb(null, chunk)
  }
}

const nativeCrc32 = (zlib as { crc32?: (data: Uint8Array, value?: number) => number }).crc32

/** The interface of crc32-stream's CRC32Stream that compress-commons reads, with the native CRC-32. */
class NativeCrc32Stream extends Transform {
  private crc = 0
  private raw = 0
  override _transform(chunk: Buffer, _enc: BufferEncoding, cb: TransformCallback): void {
    this.crc = nativeCrc32!(chunk, this.crc)
    this.raw += chunk.length
    cb(null, chunk)
  }
  digest(): Buffer {
    const b = Buffer.allocUnsafe(4)
    b.writeUInt32BE(this.crc >>> 0, 0)
    return b
  }
  size(): number {
    return this.raw
  }
}

interface ZipEngine {
  _smartStream(ae: { getMethod(): number }, callback: unknown): unknown
}

/**
 * Gives this archive's zip engine (compress-commons' ZipArchiveOutputStream, under archiver's
 * ZipArchive) the native CRC-32 for stored stream entries, by shadowing its _smartStream on this
 * instance only: the same code with NativeCrc32Stream in place of CRC32Stream. Anything
 * unexpected (another archiver layout, no zlib.crc32, a deflated entry) keeps archiver's own path.
 */
function useNativeCrc(archive: ZipArchive): void {
  const engine = (archive as unknown as { _module?: { engine?: ZipEngine } })._module?.engine
  if (!nativeCrc32 || !engine || typeof engine._smartStream !== 'function') return
  const original = engine._smartStream
  const STORED = 0
  engine._smartStream = function (this: ZipEngine & NodeJS.WritableStream, ae, callback) {
    if (ae.getMethod() !== STORED) return original.call(this, ae, callback)
    const entry = ae as {
      getMethod(): number
      setCrc(n: number): void
      setSize(n: number): void
      setCompressedSize(n: number): void
    }
    const owner = this as unknown as { _afterAppend(ae: unknown): void }
    const crc = new NativeCrc32Stream()
    let error: Error | null = null
    crc.once('end', () => {
      entry.setCrc(crc.digest().readUInt32BE(0))
      entry.setSize(crc.size())
      entry.setCompressedSize(crc.size())
      owner._afterAppend(ae)
      ;(callback as (err: Error | null, ae: unknown) => void)(error, ae)
    })
    crc.once('error', (err) => {
      error = err
    })
    crc.pipe(this, { end: false })
    return crc
  }
}

export interface ZipEntryResult {
  sha256: string
  bytes: number
}

export class PackZip {
  private readonly archive: ZipArchive
  private readonly zipHash = new Hashing((n) => this.syncInBackground(n))
  private unsynced = 0
  private syncing = false
  private readonly out
  private readonly done: Promise<void>
  private failure: Error | null = null
  private readonly waiting = new Map<string, () => void>()

  private constructor(
    private readonly tmpPath: string,
    private readonly finalPath: string,
    private readonly date: Date,
  ) {
    this.archive = new ZipArchive({ store: true, zlib: { level: 0 }, highWaterMark: READ_CHUNK })
    useNativeCrc(this.archive)
    this.out = createWriteStream(tmpPath, { flags: 'wx', highWaterMark: READ_CHUNK })
    this.done = new Promise<void>((resolve, reject) => {
      this.out.once('close', () => (this.failure ? reject(this.failure) : resolve()))
      const fail = (err: Error) => {
        this.failure ??= err
        for (const w of this.waiting.values()) w()
        this.out.destroy()
      }
      this.archive.once('error', fail)
      this.archive.on('warning', fail)
      this.zipHash.once('error', fail)
      this.out.once('error', fail)
    })
    this.done.catch(() => undefined)
    this.archive.on('entry', (e) => {
      this.waiting.get(e.name)?.()
      this.waiting.delete(e.name)
    })
    this.archive.pipe(this.zipHash).pipe(this.out)
  }

  /** Starts a background fdatasync once SYNC_EVERY more bytes went out (one at a time; errors are left to the final fsync). */
  private syncInBackground(n: number): void {
    this.unsynced += n
    const fd = (this.out as unknown as { fd: number | null }).fd
    if (this.syncing || this.unsynced < SYNC_EVERY || typeof fd !== 'number' || this.failure) return
    this.unsynced = 0
    this.syncing = true
    fdatasync(fd, () => {
      this.syncing = false
    })
  }

  static create(tmpPath: string, finalPath: string, date: Date): PackZip {
    return new PackZip(tmpPath, finalPath, date)
  }

  private entryDone(name: string): Promise<void> {
    return new Promise<void>((resolve, reject) => {
      this.waiting.set(name, () => (this.failure ? reject(this.failure) : resolve()))
    })
  }

  /**
   * Adds a file and resolves once archiver has read all of it (so the caller may delete it),
   * with its size and the SHA-256 of the bytes that went in.
   */
  async addFile(name: string, path: string): Promise<ZipEntryResult> {
    if (this.failure) throw this.failure
    const { size } = await stat(path)
    const entry = this.entryDone(name)
    const source = createReadStream(path, { highWaterMark: READ_CHUNK })
    const hashing = new Hashing()
    source.once('error', (err) => hashing.destroy(err))
    this.archive.append(source.pipe(hashing), { name, store: true, date: this.date })
    await entry
    return { bytes: size, sha256: hashing.hash.digest('hex') }
  }

  async addBuffer(name: string, data: Buffer): Promise<void> {
    if (this.failure) throw this.failure
    const entry = this.entryDone(name)
    const s = new PassThrough()
    s.end(data)
    this.archive.append(s, { name, store: true, date: this.date })
    await entry
  }

  /** Finishes the zip, fsyncs it and renames it into place. */
  async finish(): Promise<ZipEntryResult> {
    if (this.failure) throw this.failure
    await this.archive.finalize()
    await this.done
    const fh = await open(this.tmpPath, 'r+')
    try {
      await fh.sync()
    } finally {
      await fh.close()
    }
    await rename(this.tmpPath, this.finalPath)
    return { sha256: this.zipHash.hash.digest('hex'), bytes: this.zipHash.bytes }
  }

  /** Stops writing and deletes the partial zip. */
  async abort(): Promise<void> {
    this.failure ??= new Error('zip aborted')
    this.archive.abort()
    this.out.destroy()
    await this.done.catch(() => undefined)
    await rm(this.tmpPath, { force: true })
  }
}

// ---- manifests ----

export const MANIFEST_COLUMNS = [
  'file',
  'durationSeconds',
  'sampleRate',
  'bitDepth',
  'channels',
  'integratedLufs',
  'truePeakDbtp',
  'loudnessRangeLu',
  'underTargetDb',
  'sources',
  'tags',
  'takeId',
  'regionName',
  'licence',
  'sha256',
  'originalName',
  'sourceFile',
] as const satisfies readonly (keyof ManifestItem)[]

/**
 * One manifest cell through the app's one CSV writer (server/core/csv.ts: RFC 4180 quoting,
 * OWASP's CSV-injection prefix on text, numbers as numbers). A prefixed cell is also quoted
 * (the OWASP rule), so the apostrophe is plainly part of the text.
 */
function manifestCell(item: ManifestItem, col: (typeof MANIFEST_COLUMNS)[number]): string {
  const v = item[col]
  if (v === null || v === undefined || typeof v === 'number') return csvCell(v)
  const text = col === 'sources' ? (v as string[]).join('; ') : col === 'tags' ? (v as string[]).join(';') : String(v)
  const cell = csvCell(text)
  return cell.startsWith("'") ? `"${cell.replace(/"/g, '""')}"` : cell
}

export function manifestCsv(items: ManifestItem[]): string {
  // modulation_file: the control curves beside the item's audio, `;`-separated (empty: none).
  const lines = [[...MANIFEST_COLUMNS, 'modulation_file'].join(',')]
  for (const it of items) {
    const curves = csvCell((it.modulation ?? []).map((m) => m.file).join(';') || null)
    lines.push([...MANIFEST_COLUMNS.map((c) => manifestCell(it, c)), curves].join(','))
  }
  return lines.join('\r\n') + '\r\n'
}
