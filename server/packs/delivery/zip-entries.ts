// Where each file of a build's zip lies inside it, so one item can be served
// straight out of the stored zip (a ranged read at the entry's data offset):
// no second copy on disk, and the bytes are exactly the published ones.
// Reads the zip's end records and central directory (PKWARE APPNOTE.TXT 6.3:
// 4.3.12 central directory header, 4.3.16 end of central directory record,
// 4.3.14/4.3.15 ZIP64 end record and locator, 4.5.3 ZIP64 extra field), then
// the entry's local header (4.3.7) for the length of its name and extra field.
// Build zips are written once and never change, so the directory is cached.
import { open, stat, type FileHandle } from 'node:fs/promises'

export interface ZipEntry {
  name: string
  /** 0 stored, 8 deflated (APPNOTE 4.4.5). Builds store every entry. */
  method: number
  /** Bytes of the entry as stored in the zip. */
  compressedSize: number
  size: number
  localHeaderOffset: number
}

const EOCD = 0x06054b50
const ZIP64_LOCATOR = 0x07064b50
const ZIP64_EOCD = 0x06064b50
const CENTRAL = 0x02014b50
const LOCAL = 0x04034b50
const MAX32 = 0xffffffff
/** A central directory larger than this is not one of ours (500 items take a few tens of KB). */
const MAX_DIRECTORY = 64 * 1024 * 1024

export class ZipFormatError extends Error {}

async function readAt(fh: FileHandle, position: number, length: number): Promise<Buffer> {
  const buf = Buffer.alloc(length)
  const { bytesRead } = await fh.read(buf, 0, length, position)
  if (bytesRead !== length) throw new ZipFormatError('the zip ends early')
  return buf
}

const u64 = (b: Buffer, at: number) => Number(b.readBigUInt64LE(at))

async function readDirectory(fh: FileHandle, fileSize: number): Promise<Map<string, ZipEntry>> {
  // The end record is 22 bytes plus a comment of up to 65,535 bytes.
  const tailLength = Math.min(fileSize, 22 + 0xffff)
  const tail = await readAt(fh, fileSize - tailLength, tailLength)
  let at = -1
  for (let i = tail.length - 22; i >= 0; i--) {
    if (tail.readUInt32LE(i) === EOCD) {
      at = i
      break
    }
  }
  if (at < 0) throw new ZipFormatError('no end of central directory record')
  let count = tail.readUInt16LE(at + 10)
  let dirSize = tail.readUInt32LE(at + 12)
  let dirOffset = tail.readUInt32LE(at + 16)
  if (count === 0xffff || dirSize === MAX32 || dirOffset === MAX32) {
    if (at < 20 || tail.readUInt32LE(at - 20) !== ZIP64_LOCATOR) throw new ZipFormatError('no ZIP64 end record locator')
    const rec = await readAt(fh, u64(tail, at - 20 + 8), 56)
    if (rec.readUInt32LE(0) !== ZIP64_EOCD) throw new ZipFormatError('no ZIP64 end record')
    count = u64(rec, 32)
    dirSize = u64(rec, 40)
    dirOffset = u64(rec, 48)
  }
  if (dirSize > MAX_DIRECTORY || dirOffset + dirSize > fileSize)
    throw new ZipFormatError('central directory out of bounds')
  const dir = await readAt(fh, dirOffset, dirSize)
  const entries = new Map<string, ZipEntry>()
  let p = 0
  for (let k = 0; k < count; k++) {
    if (p + 46 > dir.length || dir.readUInt32LE(p) !== CENTRAL) throw new ZipFormatError('damaged central directory')
    const nameLength = dir.readUInt16LE(p + 28)
    const extraLength = dir.readUInt16LE(p + 30)
    const commentLength = dir.readUInt16LE(p + 32)
    const entry: ZipEntry = {
      name: dir.toString('utf8', p + 46, p + 46 + nameLength),
      method: dir.readUInt16LE(p + 10),
      compressedSize: dir.readUInt32LE(p + 20),
      size: dir.readUInt32LE(p + 24),
      localHeaderOffset: dir.readUInt32LE(p + 42),
    }
    // ZIP64 extra field: the 64-bit values, in this order, of those that read 0xFFFFFFFF.
    let x = p + 46 + nameLength
    const extraEnd = x + extraLength
    while (x + 4 <= extraEnd) {
      const id = dir.readUInt16LE(x)
      const len = dir.readUInt16LE(x + 2)
      if (id === 0x0001) {
        let v = x + 4
        if (entry.size === MAX32) {
          entry.size = u64(dir, v)
          v += 8
        }
        if (entry.compressedSize === MAX32) {
          entry.compressedSize = u64(dir, v)
          v += 8
        }
        if (entry.localHeaderOffset === MAX32) entry.localHeaderOffset = u64(dir, v)
      }
      x += 4 + len
    }
    entries.set(entry.name, entry)
    p = extraEnd + commentLength
  }
  return entries
}

const cache = new Map<string, { key: string; entries: Map<string, ZipEntry> }>()
const CACHE_ZIPS = 32

/** The entries of a zip by name (cached per file, size and modification time). */
export async function zipEntries(file: string): Promise<Map<string, ZipEntry>> {
  const st = await stat(file)
  const key = `${st.size}:${st.mtimeMs}`
  const hit = cache.get(file)
  if (hit?.key === key) return hit.entries
  const fh = await open(file, 'r')
  try {
    const entries = await readDirectory(fh, st.size)
    if (cache.size >= CACHE_ZIPS) cache.delete(cache.keys().next().value!)
    cache.set(file, { key, entries })
    return entries
  } finally {
    await fh.close()
  }
}

/** First and last byte (inclusive) of a stored entry's data inside the zip. */
export async function storedEntryRange(
  file: string,
  name: string,
): Promise<{ start: number; end: number; size: number } | null> {
  const entry = (await zipEntries(file)).get(name)
  if (!entry) return null
  if (entry.method !== 0)
    throw new ZipFormatError(`${name} is compressed; only stored entries can be served as they lie`)
  const fh = await open(file, 'r')
  try {
    const local = await readAt(fh, entry.localHeaderOffset, 30)
    if (local.readUInt32LE(0) !== LOCAL) throw new ZipFormatError(`no local header for ${name}`)
    const start = entry.localHeaderOffset + 30 + local.readUInt16LE(26) + local.readUInt16LE(28)
    return { start, end: start + entry.compressedSize - 1, size: entry.compressedSize }
  } finally {
    await fh.close()
  }
}
