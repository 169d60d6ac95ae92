// Streaming WAVE writer. Samples go to a temp file beside the target, which is renamed
// over the target only after sizes are patched and the file is fsynced, so the final
// name never holds a half-written take. A scratch file (e.g. a render that is
// copied into a zip and deleted) may skip the fsync: WavWriterOpenOptions.durable.
import { open, rename, unlink, type FileHandle } from 'node:fs/promises'
import { randomBytes } from 'node:crypto'
import { basename, dirname, join } from 'node:path'
import { encodeInterleaved, encodeIntsInterleaved, Tpdf, type EncodeFormat } from './wav-encode'
import { applyPatches, finalPatches, planLayout, trailer, type Plan, type WavWriteOptions } from './wav-layout'
import { bextSize, type BextInput } from './wav-bext'

export type { WavWriteOptions, BextInput }

const BLOCK_FRAMES = 65536

export interface WavWriterOpenOptions {
  /** fsync before the rename into place (default true). false: for scratch files that are read back and deleted. */
  durable?: boolean
}

function checkPlanar(planar: ArrayLike<number>[], channels: number): number {
  if (planar.length !== channels) throw new RangeError(`expected ${channels} channel arrays, got ${planar.length}`)
  const n = planar.length ? planar[0].length : 0
  for (const p of planar) if (p.length !== n) throw new RangeError('channel arrays differ in length')
  return n
}

function encodeFormat(o: WavWriteOptions, p: Plan): EncodeFormat {
  return { encoding: o.encoding, bitsPerSample: p.bits, validBitsPerSample: p.validBits, channels: o.channels }
}

function ditherFor(o: WavWriteOptions): Tpdf | null {
  return o.dither === 'tpdf' && o.encoding === 'pcm' && o.bitsPerSample <= 24 ? new Tpdf(o.ditherSeed) : null
}

export class WavWriter {
  private frames = 0
  private pos: number
  private done = false
  /** Calls are serialised: a caller that does not await write() must not interleave blocks. */
  private queue: Promise<unknown> = Promise.resolve()
  private bext: BextInput | undefined
  private readonly buf: Buffer
  private readonly fmt: EncodeFormat
  private readonly dither: Tpdf | null

  private constructor(
    private readonly fh: FileHandle,
    private readonly path: string,
    private readonly tmp: string,
    private readonly opts: WavWriteOptions,
    private readonly plan: Plan,
    private readonly durable: boolean,
  ) {
    this.pos = plan.header.length
    this.bext = opts.bext
    this.fmt = encodeFormat(opts, plan)
    this.dither = ditherFor(opts)
    this.buf = Buffer.allocUnsafeSlow(BLOCK_FRAMES * plan.blockAlign) // aligned for typed views
  }

  static async open(path: string, opts: WavWriteOptions, open_: WavWriterOpenOptions = {}): Promise<WavWriter> {
    const plan = planLayout(opts)
    const tmp = join(dirname(path), `.${basename(path)}.${randomBytes(6).toString('hex')}.part`)
    const fh = await open(tmp, 'wx')
    try {
      await fh.write(plan.header, 0, plan.header.length, 0)
    } catch (e) {
      await fh.close().catch(() => {})
      await unlink(tmp).catch(() => {})
      throw e
    }
    return new WavWriter(fh, path, tmp, opts, plan, open_.durable ?? true)
  }

  /** Appends frames (one array per channel, equal lengths). PCM is clipped to its range, float is not. */
  write(planar: ArrayLike<number>[]): Promise<void> {
    if (this.done) return Promise.reject(new Error('WavWriter is closed'))
    const run = this.queue.then(() => this.writeNow(planar))
    this.queue = run.catch(() => {})
    return run
  }

  /**
   * Appends frames given as integers already on the output grid (16- or 24-bit PCM whose valid
   * bits fill the container): no rounding, clipping or dither here. `ints` must stay untouched
   * until the returned promise settles.
   */
  writeInts(ints: Int32Array[], frames: number): Promise<void> {
    if (this.done) return Promise.reject(new Error('WavWriter is closed'))
    const bits = this.plan.bits
    if (this.opts.encoding !== 'pcm' || (bits !== 16 && bits !== 24) || this.plan.validBits !== bits || this.dither) {
      return Promise.reject(new RangeError("writeInts takes 16- or 24-bit PCM without the writer's own dither"))
    }
    if (ints.length !== this.opts.channels || ints.some((c) => c.length < frames))
      return Promise.reject(new RangeError(`expected ${this.opts.channels} channel arrays of ${frames} frames`))
    const run = this.queue.then(() =>
      this.appendBlocks(frames, (from, n) =>
        encodeIntsInterleaved(from === 0 ? ints : ints.map((c) => c.subarray(from)), n, bits, this.buf),
      ),
    )
    this.queue = run.catch(() => {})
    return run
  }

  private writeNow(planar: ArrayLike<number>[]): Promise<void> {
    const n = checkPlanar(planar, this.opts.channels)
    return this.appendBlocks(n, (from, frames) =>
      encodeInterleaved(planar, from, frames, this.fmt, this.buf, this.dither),
    )
  }

  /** Encodes `total` frames into the block buffer BLOCK_FRAMES at a time (encode(from, n)) and appends each. */
  private async appendBlocks(total: number, encode: (from: number, n: number) => void): Promise<void> {
    for (let from = 0; from < total; from += BLOCK_FRAMES) {
      const frames = Math.min(BLOCK_FRAMES, total - from)
      encode(from, frames)
      const len = frames * this.plan.blockAlign
      await this.writeAll(this.buf, len, this.pos)
      this.pos += len
      this.frames += frames
    }
  }

  /** Replaces the bext written on close (e.g. with loudness measured during the render). Needs opts.bext at open. */
  updateBext(b: BextInput): void {
    if (this.plan.bextAt === null) throw new Error('no bext reserved: pass opts.bext to WavWriter.open')
    if (bextSize(b.codingHistory) > this.plan.bextSize)
      throw new RangeError('coding history longer than the reserved bext chunk')
    this.bext = b
  }

  /** Patches sizes (and ds64), appends the after-data chunks, fsyncs (unless opened with durable: false) and renames into place. `bytes` is the file size. */
  async close(): Promise<{ frames: number; bytes: number }> {
    if (this.done) throw new Error('WavWriter is closed')
    this.done = true
    await this.queue
    try {
      const dataBytes = this.frames * this.plan.blockAlign
      const tail = Buffer.concat([Buffer.alloc(dataBytes & 1), trailer(this.opts)])
      await this.writeAll(tail, tail.length, this.pos)
      const fileSize = this.pos + tail.length
      for (const p of finalPatches(this.plan, this.opts, this.frames, fileSize, this.bext)) {
        await this.writeAll(p.bytes, p.bytes.length, p.at)
      }
      if (this.durable) await this.fh.sync()
      await this.fh.close()
      await rename(this.tmp, this.path)
      return { frames: this.frames, bytes: fileSize }
    } catch (e) {
      await this.fh.close().catch(() => {})
      await unlink(this.tmp).catch(() => {})
      throw e
    }
  }

  /** Closes and deletes the partial file; the target name is untouched. */
  async abort(): Promise<void> {
    if (this.done) return
    this.done = true
    await this.queue
    await this.fh.close().catch(() => {})
    await unlink(this.tmp).catch(() => {})
  }

  private async writeAll(b: Buffer, len: number, at: number): Promise<void> {
    let off = 0
    while (off < len) {
      const { bytesWritten } = await this.fh.write(b, off, len - off, at + off)
      off += bytesWritten
    }
  }
}

export async function writeWav(path: string, planar: ArrayLike<number>[], opts: WavWriteOptions): Promise<void> {
  checkPlanar(planar, opts.channels)
  const w = await WavWriter.open(path, opts)
  try {
    await w.write(planar)
  } catch (e) {
    await w.abort()
    throw e
  }
  await w.close()
}

/** The same bytes the streaming writer produces, built in memory. */
export function encodeWav(planar: ArrayLike<number>[], opts: WavWriteOptions): Buffer {
  const plan = planLayout(opts)
  const frames = checkPlanar(planar, opts.channels)
  const data = Buffer.allocUnsafeSlow(frames * plan.blockAlign)
  encodeInterleaved(planar, 0, frames, encodeFormat(opts, plan), data, ditherFor(opts))
  const out = Buffer.concat([plan.header, data, Buffer.alloc(data.length & 1), trailer(opts)])
  applyPatches(out, finalPatches(plan, opts, frames, out.length, opts.bext))
  return out
}
