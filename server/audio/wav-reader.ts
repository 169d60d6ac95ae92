// WAVE container reader: RIFF, RF64 and BW64 (EBU Tech 3306 / ITU-R BS.2088 ds64).
// Only headers are read with positioned reads, so probing a multi-GiB take is cheap.
//
// Decisions on damaged files (recorders that stop mid-take do all of these):
// - data size 0 or 0xFFFFFFFF (or ds64 data size 0): the data runs to the end of the
//   file; format.recovered = true (false only for size 0 when the file really ends there).
// - a declared data size that runs past EOF is clamped to the file, recovered = true.
//   This is never an error: the samples that exist are worth keeping.
// - a trailing partial frame is dropped (dataBytes is whole frames only).
// - the RIFF/ds64 form size is ignored for walking; many writers leave it stale.
// Errors (WavFormatError) are kept for files we cannot interpret: no RIFF/WAVE header,
// fmt missing or truncated, no data chunk, encodings and ranges the product does not take.
import { open, type FileHandle } from 'node:fs/promises'
import type { FileMetadata, WavFormat } from '@shared/schemas/analysis'
import { WavFormatError } from './wav-errors'
import { parseFmt } from './wav-fmt'
import { decodeInterleaved } from './wav-decode'
import { parseChunksMetadata, type RawChunk } from './wav-chunks'
import { flattenTags, mergeInfoTags } from './wav-tags'
import { MetaBudget, TOTAL_CHUNK_BYTES } from './wav-limits'

export { WavFormatError } from './wav-errors'

export interface WavChunkInfo {
  id: string
  /** Byte offset of the chunk payload (after the 8-byte header). */
  offset: number
  /** Payload bytes present in the file: declared size (64-bit via ds64 where needed), clamped to EOF. */
  size: number
}

export interface WavInfo {
  format: WavFormat
  /** 1 PCM, 3 float, 0xFFFE extensible (the resolved sub-format is in format.encoding). */
  formatTag: number
  blockAlign: number
  /** Byte offset of the first sample. */
  dataOffset: number
  /** Whole frames only. */
  dataBytes: number
  /** Every top-level chunk seen, in file order. */
  chunks: WavChunkInfo[]
  fileSize: number
}

const HEAD_BYTES = 64 * 1024
/** Bound on the chunk walk: a crafted file of empty chunks must not keep us busy. */
const MAX_CHUNKS = 4096
const FMT_READ = 64
const MAX_META_CHUNK = 16 * 1024 * 1024

/** Reads `len` bytes at `pos` (fewer at EOF), looping over short reads. */
async function readAt(fh: FileHandle, pos: number, len: number, into?: Buffer): Promise<Buffer> {
  const buf = into ?? Buffer.alloc(len)
  let got = 0
  while (got < len) {
    const { bytesRead } = await fh.read(buf, got, len - got, pos + got)
    if (bytesRead === 0) break
    got += bytesRead
  }
  return got === buf.length ? buf : buf.subarray(0, got)
}

/** Serves small reads from the first 64 KiB held in memory, where chunk tables usually live. */
function headerReader(fh: FileHandle, head: Buffer) {
  return async (pos: number, len: number): Promise<Buffer> =>
    pos + len <= head.length ? head.subarray(pos, pos + len) : readAt(fh, pos, len)
}

/** A RIFF chunk id is four printable ASCII characters (space allowed, e.g. 'fmt '). */
function isChunkId(b: Buffer, at = 0): boolean {
  if (b.length < at + 4) return false
  for (let i = at; i < at + 4; i++) if (b[i] < 0x20 || b[i] > 0x7e) return false
  return true
}

function u64(b: Buffer, at: number): number {
  return Number(b.readBigUInt64LE(at))
}

interface Ds64 {
  data: number
  table: Map<string, number>
}

function parseDs64(b: Buffer): Ds64 | null {
  if (b.length < 24) return null
  const table = new Map<string, number>()
  const entries = b.length >= 28 ? b.readUInt32LE(24) : 0
  for (let i = 0, at = 28; i < entries && at + 12 <= b.length; i++, at += 12) {
    table.set(b.toString('latin1', at, at + 4), u64(b, at + 4))
  }
  return { data: u64(b, 8), table }
}

export async function probeWav(path: string): Promise<WavInfo> {
  const fh = await open(path, 'r')
  try {
    const fileSize = (await fh.stat()).size
    const head = await readAt(fh, 0, Math.min(fileSize, HEAD_BYTES))
    const read = headerReader(fh, head)
    const magic = head.toString('latin1', 0, 4)
    if (magic !== 'RIFF' && magic !== 'RF64' && magic !== 'BW64') {
      throw new WavFormatError('not a WAVE file: the first bytes are not RIFF, RF64 or BW64')
    }
    if (head.length < 12) throw new WavFormatError('truncated: the file ends inside the RIFF header')
    const form = head.toString('latin1', 8, 12)
    if (form !== 'WAVE') throw new WavFormatError(`not a WAVE file: the ${magic} form type is "${form}"`)
    const container = magic as WavFormat['container']

    const chunks: WavChunkInfo[] = []
    let fmtBuf: Buffer | null = null
    let ds64: Ds64 | null = null
    let data: { offset: number; bytes: number; recovered: boolean } | null = null
    let pos = 12
    while (pos + 8 <= fileSize) {
      if (chunks.length >= MAX_CHUNKS) {
        if (data) break
        throw new WavFormatError(`more than ${MAX_CHUNKS} chunks before the data chunk`)
      }
      const h = await read(pos, 8)
      if (!isChunkId(h)) {
        if (data) break // trailing bytes after the last chunk
        throw new WavFormatError(`malformed chunk header at byte ${pos}`)
      }
      const id = h.toString('latin1', 0, 4)
      const size32 = h.readUInt32LE(4)
      let size = size32
      if (size32 === 0xffffffff && ds64) size = id === 'data' ? ds64.data : (ds64.table.get(id) ?? size32)
      const payload = pos + 8
      const avail = fileSize - payload

      if (id === 'data' && !data) {
        const placeholder = size === 0 || (size32 === 0xffffffff && (!ds64 || size === 0))
        const bytes = placeholder || size > avail ? avail : size
        const recovered = placeholder ? size32 === 0xffffffff || avail > 0 : size > avail
        data = { offset: payload, bytes, recovered }
        chunks.push({ id, offset: payload, size: bytes })
        if (bytes !== size) break // the data runs to EOF: nothing after it can be located
      } else {
        chunks.push({ id, offset: payload, size: Math.min(size, avail) })
        if (id === 'fmt ' && !fmtBuf) {
          if (size > avail) throw new WavFormatError('truncated: fmt chunk ends past end of file')
          fmtBuf = Buffer.from(await read(payload, Math.min(size, FMT_READ)))
        } else if (id === 'ds64' && chunks.length === 1 && container !== 'RIFF') {
          ds64 = parseDs64(Buffer.from(await read(payload, Math.min(size, avail, 28 + 12 * 64))))
        }
        if (size > avail) break
      }
      pos = await nextChunk(read, payload, size)
    }
    if (!fmtBuf) throw new WavFormatError('fmt chunk missing')
    if (!data) throw new WavFormatError('data chunk missing')
    const f = parseFmt(fmtBuf)
    const frames = Math.floor(data.bytes / f.blockAlign)
    const format: WavFormat = {
      container,
      encoding: f.encoding,
      bitsPerSample: f.bitsPerSample,
      validBitsPerSample: f.validBitsPerSample,
      sampleRate: f.sampleRate,
      channels: f.channels,
      channelMask: f.channelMask,
      frames,
      durationSeconds: frames / f.sampleRate,
      recovered: data.recovered,
    }
    return {
      format,
      formatTag: f.formatTag,
      blockAlign: f.blockAlign,
      dataOffset: data.offset,
      dataBytes: frames * f.blockAlign,
      chunks,
      fileSize,
    }
  } finally {
    await fh.close()
  }
}

/** Odd sizes are followed by a pad byte; a few writers forget it, so take the unpadded position when only it holds a chunk id. */
async function nextChunk(
  read: (p: number, n: number) => Promise<Buffer>,
  payload: number,
  size: number,
): Promise<number> {
  const end = payload + size
  if (size % 2 === 0) return end
  const probe = await read(end, 5)
  return !isChunkId(probe, 1) && isChunkId(probe, 0) ? end : end + 1
}

export interface ReadFramesOptions {
  startFrame?: number
  endFrame?: number
  /** Frames per yielded block; default 65536. */
  blockFrames?: number
  /**
   * Yield blocks from a ring of this many sets of arrays (at least 2) instead of fresh arrays: the
   * caller must be done with a block (and every reference to it) before the one `recycle` blocks
   * later is yielded. Saves an allocation per block in hot loops; default: fresh arrays.
   */
  recycle?: number
  /** Float-64 files only: multiply samples by this (a power of two) before they become float-32. */
  float64Scale?: number
}

function clampInt(v: number | undefined, lo: number, hi: number, dflt: number): number {
  if (v === undefined || !Number.isFinite(v)) return dflt
  return Math.min(hi, Math.max(lo, Math.floor(v)))
}

/**
 * Planar blocks of samples scaled to −1..1: 8-bit is unsigned with offset 128, wider PCM
 * is the container-width integer / 2^(bits−1) (extensible valid bits sit in the top bits),
 * float is passed through unclipped. Memory is one read buffer plus the yielded block.
 */
export async function* readFrames(
  path: string,
  info: WavInfo,
  opts: ReadFramesOptions = {},
): AsyncGenerator<Float32Array[]> {
  const { format, blockAlign, dataOffset } = info
  const total = format.frames
  const start = clampInt(opts.startFrame, 0, total, 0)
  const end = clampInt(opts.endFrame, start, total, total)
  const block = clampInt(opts.blockFrames, 1, 1 << 24, 65536)
  if (start >= end) return
  const fh = await open(path, 'r')
  // Two read buffers: the next block is read while the caller works on the one yielded.
  let ahead: Promise<Buffer> | null = null
  try {
    // allocUnsafeSlow: not from the shared pool, so byteOffset is 0 and typed views are aligned.
    const bytes = Math.min(block, end - start) * blockAlign
    let buf = Buffer.allocUnsafeSlow(bytes)
    let spare = end - start > block ? Buffer.allocUnsafeSlow(bytes) : null
    const ring: (Float32Array[] | undefined)[] | null = opts.recycle
      ? new Array(Math.max(2, Math.floor(opts.recycle)))
      : null
    let turn = 0
    let frame = start
    ahead = readAt(fh, dataOffset + frame * blockAlign, Math.min(block, end - frame) * blockAlign, buf)
    while (frame < end) {
      const want = Math.min(block, end - frame)
      const got = await (ahead as Promise<Buffer>)
      ahead = null
      const frames = Math.floor(got.length / blockAlign)
      if (frames === 0) break // the file shrank since it was probed
      let out: Float32Array[]
      if (ring && frames === block) {
        const k = turn++ % ring.length
        out = ring[k] ??= Array.from({ length: format.channels }, () => new Float32Array(block))
      } else {
        out = []
        for (let c = 0; c < format.channels; c++) out.push(new Float32Array(frames))
      }
      decodeInterleaved(buf, frames, format, out, opts.float64Scale)
      frame += frames
      if (frames < want) {
        yield out
        break
      }
      if (frame < end && spare) {
        const next = spare
        spare = buf
        buf = next
        ahead = readAt(fh, dataOffset + frame * blockAlign, Math.min(block, end - frame) * blockAlign, buf)
        ahead.catch(() => undefined) // awaited at the next turn, or settled in finally
      }
      yield out
    }
  } finally {
    if (ahead) await ahead.catch(() => undefined)
    await fh.close()
  }
}

const META_IDS = new Set(['bext', 'iXML', 'LIST', 'cue ', 'smpl'])

export interface ReadMetadataOptions {
  /** Time allowed for music-metadata's general tags (ours are linear and bounded); past it, tags stay {} with a note. */
  tagsTimeLimitMs?: number
}

/**
 * bext, iXML, LIST/INFO, cue + LIST/adtl labels and smpl loops from our own parsers; `tags` from
 * music-metadata's common tags (empty when it throws), with INFO-derived tags taken from our parser.
 * Untrusted sizes are bounded (wav-limits.ts): chunks over MAX_META_CHUNK or past TOTAL_CHUNK_BYTES
 * are skipped, and `dropped` says what was cut. Runs in the analysis worker, never on the API thread.
 */
export async function readMetadata(path: string, info: WavInfo, opts: ReadMetadataOptions = {}): Promise<FileMetadata> {
  const raw: RawChunk[] = []
  const budget = new MetaBudget()
  let read = 0
  const fh = await open(path, 'r')
  try {
    for (const c of info.chunks) {
      if (!META_IDS.has(c.id)) continue
      if (c.size > MAX_META_CHUNK || read + c.size > TOTAL_CHUNK_BYTES) {
        budget.note(
          `${c.id.trim()} chunk of ${c.size} bytes at byte ${c.offset}: skipped (metadata is read up to ${MAX_META_CHUNK / 2 ** 20} MiB a chunk, ${TOTAL_CHUNK_BYTES / 2 ** 20} MiB a file)`,
        )
        continue
      }
      read += c.size
      raw.push({ id: c.id, data: await readAt(fh, c.offset, c.size) })
    }
  } finally {
    await fh.close()
  }
  const meta = parseChunksMetadata(raw, budget)
  let tags: Record<string, string> = {}
  const limit = opts.tagsTimeLimitMs ?? 10_000
  let timer: NodeJS.Timeout | undefined
  // music-metadata walks every entry itself (500,000 INFO entries took it 150 s, and a time limit
  // cannot stop it), so it only reads files whose metadata stayed within our bounds.
  if (budget.dropped.length || read > TAGS_MAX_BYTES) {
    budget.note("general tags: not read (the file's metadata is over the limits above)")
    return { ...meta, tags: mergeInfoTags(tags, meta.info), dropped: budget.dropped }
  }
  // Loading music-metadata costs a fresh process 0.1–0.2 s, most of a short take's analysis: a file
  // with no chunk it takes tags from would only give back {} for it.
  if (!mayHoldTags(info)) return { ...meta, tags: mergeInfoTags(tags, meta.info), dropped: budget.dropped }
  try {
    // Loaded on first use: the measuring path never needs it, and it costs ~0.2 s to load.
    const { parseFile } = await import('music-metadata')
    const timedOut = new Promise<never>((_r, reject) => {
      timer = setTimeout(() => reject(new TagsTimeout()), limit)
    })
    const mm = await Promise.race([parseFile(path, { skipCovers: true, duration: false }), timedOut])
    tags = flattenTags(mm.common)
  } catch (err) {
    // music-metadata refuses some files we can read (e.g. a short CSET chunk); the take is
    // still usable, so tags stay {}. (RF64/BW64 it does not throw on: it returns no tags.)
    if (err instanceof TagsTimeout) budget.note(`general tags: not read within ${limit / 1000} s`)
  } finally {
    clearTimeout(timer)
  }
  for (const [k, v] of Object.entries(tags)) tags[k] = budget.text(`tag ${k}`, v)
  return { ...meta, tags: mergeInfoTags(tags, meta.info), dropped: budget.dropped }
}

class TagsTimeout extends Error {}

/** The chunks music-metadata draws WAVE tags from (LIST/INFO, ID3 in either spelling, bext). */
const TAG_CHUNK_IDS = new Set(['LIST', 'id3 ', 'ID3 ', 'bext'])

/**
 * Whether music-metadata could find tags: a tag chunk was listed, or the chunk walk may have missed
 * one (it stopped at a data chunk running to the end of the file, or at the chunk-count bound).
 */
function mayHoldTags(info: WavInfo): boolean {
  if (info.format.recovered || info.chunks.length >= MAX_CHUNKS) return true
  return info.chunks.some((c) => TAG_CHUNK_IDS.has(c.id))
}

/** Metadata bytes up to which music-metadata is asked for general tags. */
const TAGS_MAX_BYTES = 4 * 2 ** 20
