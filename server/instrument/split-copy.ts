// Sample-exact copies of ranges of a WAVE file, each a file of its own: the
// data bytes of the range untouched (same encoding, bit depth and channels) and
// every other chunk kept in its place, with the few fields that count samples
// moved to the range: bext TimeReference (EBU Tech 3285: samples since
// midnight of the first sample) gains the range's start, cue points and smpl
// loops are shifted (those outside the range are left out), fact's sample
// length and an RF64/BW64 ds64's sizes are rewritten. Runs on a worker thread.
import { createHash } from 'node:crypto'
import { open, rm } from 'node:fs/promises'
import { probeWav, type WavInfo } from '../audio/wav-reader'

export interface SplitCopyTask {
  path: string
  /** Ranges in sample frames, end exclusive, inside the file. */
  ranges: { start: number; end: number }[]
  /** Where each copy is written (one per range). */
  outPaths: string[]
}

export interface SplitCopyResult {
  sha256: string
  size: number
}

/** Metadata chunks are held in memory while copied; larger ones are refused, not truncated. */
const MAX_META_CHUNK = 64 * 1024 * 1024
const COPY_BLOCK = 4 * 1024 * 1024

function shiftCue(b: Buffer, start: number, frames: number): Buffer {
  if (b.length < 4) return b
  const n = Math.min(b.readUInt32LE(0), Math.floor((b.length - 4) / 24))
  const kept: Buffer[] = []
  for (let i = 0; i < n; i++) {
    const e = Buffer.from(b.subarray(4 + 24 * i, 28 + 24 * i))
    const at = e.readUInt32LE(20) - start
    if (at < 0 || at >= frames) continue
    e.writeUInt32LE(at, 4) // dwPosition: the sample position for a file without a playlist
    e.writeUInt32LE(at, 20) // dwSampleOffset
    kept.push(e)
  }
  const head = Buffer.alloc(4)
  head.writeUInt32LE(kept.length, 0)
  return Buffer.concat([head, ...kept])
}

function shiftSmpl(b: Buffer, start: number, frames: number): Buffer {
  if (b.length < 36) return b
  const n = Math.min(b.readUInt32LE(28), Math.floor((b.length - 36) / 24))
  const kept: Buffer[] = []
  for (let i = 0; i < n; i++) {
    const e = Buffer.from(b.subarray(36 + 24 * i, 60 + 24 * i))
    const s = e.readUInt32LE(8) - start
    const end = e.readUInt32LE(12) - start
    if (s < 0 || end >= frames) continue
    e.writeUInt32LE(s, 8)
    e.writeUInt32LE(end, 12)
    kept.push(e)
  }
  const head = Buffer.from(b.subarray(0, 36))
  head.writeUInt32LE(kept.length, 28)
  return Buffer.concat([head, ...kept, b.subarray(36 + 24 * n)])
}

function shiftBext(b: Buffer, start: number): Buffer {
  if (b.length < 346) return b
  const out = Buffer.from(b)
  const ref = out.readBigUInt64LE(338) + BigInt(start)
  out.writeBigUInt64LE(ref & 0xffffffffffffffffn, 338)
  return out
}

/** A chunk header; RF64/BW64 data says 0xFFFFFFFF and leaves its size to ds64. */
function header(id: string, size: number, wide: boolean): Buffer {
  const h = Buffer.alloc(8)
  h.write(id, 0, 'latin1')
  h.writeUInt32LE(wide && id === 'data' ? 0xffffffff : size, 4)
  return h
}

async function copyOne(
  src: string,
  info: WavInfo,
  meta: Map<number, Buffer>,
  range: { start: number; end: number },
  out: string,
): Promise<SplitCopyResult> {
  const frames = range.end - range.start
  const dataBytes = frames * info.blockAlign
  const wide = info.format.container !== 'RIFF'
  // Each chunk's payload (data streamed), in the source's order.
  const pieces: { id: string; body: Buffer | null; size: number }[] = info.chunks.map((c, i) => {
    if (c.id === 'data') return { id: c.id, body: null, size: dataBytes }
    let body = meta.get(i)!
    if (c.id === 'bext') body = shiftBext(body, range.start)
    else if (c.id === 'cue ') body = shiftCue(body, range.start, frames)
    else if (c.id === 'smpl') body = shiftSmpl(body, range.start, frames)
    else if (c.id === 'fact' && body.length >= 4) {
      body = Buffer.from(body)
      body.writeUInt32LE(Math.min(frames, 0xffffffff), 0)
    }
    return { id: c.id, body, size: body.length }
  })
  const total = 12 + pieces.reduce((n, p) => n + 8 + p.size + (p.size & 1), 0)
  const ds64 = pieces.find((p) => p.id === 'ds64')
  if (wide && ds64?.body && ds64.body.length >= 24) {
    const b = Buffer.from(ds64.body)
    b.writeBigUInt64LE(BigInt(total - 8), 0)
    b.writeBigUInt64LE(BigInt(dataBytes), 8)
    b.writeBigUInt64LE(BigInt(frames), 16)
    ds64.body = b
  } else if (total - 8 > 0xffffffff) {
    throw new RangeError('a copy over 4 GiB needs an RF64 source')
  }

  const hash = createHash('sha256')
  const fh = await open(out, 'wx')
  let pos = 0
  const write = async (b: Buffer) => {
    hash.update(b)
    let done = 0
    while (done < b.length) done += (await fh.write(b, done, b.length - done, pos + done)).bytesWritten
    pos += b.length
  }
  try {
    const riff = Buffer.alloc(12)
    riff.write(info.format.container, 0, 'latin1')
    riff.writeUInt32LE(wide ? 0xffffffff : total - 8, 4)
    riff.write('WAVE', 8, 'latin1')
    await write(riff)
    const sfh = await open(src, 'r')
    try {
      for (const p of pieces) {
        await write(header(p.id, p.size, wide))
        if (p.body) await write(p.body)
        else {
          const from = info.dataOffset + range.start * info.blockAlign
          const buf = Buffer.allocUnsafeSlow(Math.min(COPY_BLOCK, Math.max(1, dataBytes)))
          for (let done = 0; done < dataBytes;) {
            const want = Math.min(buf.length, dataBytes - done)
            const { bytesRead } = await sfh.read(buf, 0, want, from + done)
            if (bytesRead === 0) throw new Error('the take ended before the range did')
            await write(buf.subarray(0, bytesRead))
            done += bytesRead
          }
        }
        if (p.size & 1) await write(Buffer.alloc(1))
      }
    } finally {
      await sfh.close()
    }
    await fh.sync()
  } finally {
    await fh.close()
  }
  return { sha256: hash.digest('hex'), size: pos }
}

/** Writes every copy or none: on any failure the copies already written are removed. */
export async function runSplitCopyTask(t: SplitCopyTask): Promise<SplitCopyResult[]> {
  const info = await probeWav(t.path)
  const meta = new Map<number, Buffer>()
  const fh = await open(t.path, 'r')
  try {
    for (const [i, c] of info.chunks.entries()) {
      if (c.id === 'data') continue
      if (c.size > MAX_META_CHUNK) throw new RangeError(`the ${c.id.trim()} chunk is larger than a copy carries`)
      const b = Buffer.alloc(c.size)
      await fh.read(b, 0, c.size, c.offset)
      meta.set(i, b)
    }
  } finally {
    await fh.close()
  }
  const results: SplitCopyResult[] = []
  try {
    for (const [i, r] of t.ranges.entries()) results.push(await copyOne(t.path, info, meta, r, t.outPaths[i]))
  } catch (err) {
    await Promise.all(t.outPaths.map((p) => rm(p, { force: true })))
    throw err
  }
  return results
}
