// Waveform overview: a min/max pyramid built during the analysis pass and
// written to one binary file beside the audio.
//
// The finest level has 256 samples per pixel; each next level is 4× coarser
// and is derived incrementally from the one below, until a level has at most
// 4000 pixels (an hour at 48 kHz ends at 65536 samples per pixel, 2637 pixels).
// Since the frame count is known up front, every level's place in the file is
// known too: pixels are written in small batches at their final offsets, so the
// builder's memory is a few kilobytes per level whatever the take's length.
//
// File layout, little-endian:
//   0  4 bytes  magic "SFPK"
//   4  u16      version (1)
//   6  u16      channels
//   8  u32      sample rate
//  12  f64      frames
//  20  u16      level count L
//  22  u16      reserved (0)
//  24  L × 16 bytes: u32 samples per pixel, u32 pixel count, f64 byte offset of the level's data
//  then each level's data, pixel after pixel; within a pixel, per channel an
//  i16 min then an i16 max, value = code / 32767 (float samples beyond ±1 are
//  clamped). Min is rounded down and max up, so the envelope never shrinks.
import { closeSync, openSync, readFileSync, renameSync, rmSync, writeSync } from 'node:fs'
import { open } from 'node:fs/promises'
import type { Peaks } from '@shared/schemas/analysis'
import { CHUNK, type BlockScan } from './block-scan'

const MAGIC = 'SFPK'
const VERSION = 1
const HEADER_BYTES = 24
const LEVEL_ENTRY_BYTES = 16
const BASE_SAMPLES_PER_PIXEL = 256
const LEVEL_FACTOR = 4
const COARSEST_MAX_PIXELS = 4000
const BATCH_PIXELS = 4096
const SCALE = 32767

export const DEFAULT_MAX_POINTS = 8000

export interface PeaksLevelPlan {
  samplesPerPixel: number
  pixels: number
  offset: number
}

export function planLevels(frames: number, channels: number): PeaksLevelPlan[] {
  const sizes: { samplesPerPixel: number; pixels: number }[] = []
  for (let spp = BASE_SAMPLES_PER_PIXEL; ; spp *= LEVEL_FACTOR) {
    const pixels = Math.ceil(frames / spp)
    sizes.push({ samplesPerPixel: spp, pixels })
    if (pixels <= COARSEST_MAX_PIXELS) break
  }
  let offset = HEADER_BYTES + LEVEL_ENTRY_BYTES * sizes.length
  return sizes.map((s) => {
    const level = { ...s, offset }
    offset += s.pixels * channels * 4
    return level
  })
}

class LevelWriter {
  readonly min: Float64Array
  readonly max: Float64Array
  children = 0 // pixels of the level below merged into the current pixel
  written = 0 // pixels emitted
  private readonly batch: Int16Array
  private batched = 0

  constructor(
    readonly plan: PeaksLevelPlan,
    private readonly channels: number,
    private readonly fd: number,
  ) {
    this.min = new Float64Array(channels).fill(Infinity)
    this.max = new Float64Array(channels).fill(-Infinity)
    this.batch = new Int16Array(Math.min(BATCH_PIXELS, Math.max(1, plan.pixels)) * channels * 2)
  }

  merge(min: Float64Array, max: Float64Array): void {
    for (let c = 0; c < this.channels; c++) {
      if (min[c] < this.min[c]) this.min[c] = min[c]
      if (max[c] > this.max[c]) this.max[c] = max[c]
    }
    this.children++
  }

  /** Queues the current pixel and starts the next one. Pixels past the planned count are dropped. */
  emit(): void {
    if (this.written < this.plan.pixels) {
      const o = this.batched * this.channels * 2
      for (let c = 0; c < this.channels; c++) {
        this.batch[o + 2 * c] = Math.floor(clamp(this.min[c]) * SCALE)
        this.batch[o + 2 * c + 1] = Math.ceil(clamp(this.max[c]) * SCALE)
      }
      this.batched++
      this.written++
      if (this.batched * this.channels * 2 === this.batch.length) this.flush()
    }
    this.min.fill(Infinity)
    this.max.fill(-Infinity)
    this.children = 0
  }

  flush(): void {
    if (this.batched === 0) return
    const bytes = this.batched * this.channels * 4
    const first = this.written - this.batched
    const buf = Buffer.from(this.batch.buffer, this.batch.byteOffset, bytes)
    writeSync(this.fd, buf, 0, bytes, this.plan.offset + first * this.channels * 4)
    this.batched = 0
  }
}

/**
 * Widens channel c of the level's current pixel by lo[from..to) and hi[from..to) (chunk lows and
 * highs, or the samples themselves as both). A function of its own: with both loops inline in push,
 * V8 kept push unoptimised and this ran at a quarter of the speed.
 */
function extend(level: LevelWriter, c: number, lo: Float32Array, hi: Float32Array, from: number, to: number): void {
  let l = level.min[c]
  let h = level.max[c]
  for (let k = from; k < to; k++) {
    if (lo[k] < l) l = lo[k]
    if (hi[k] > h) h = hi[k]
  }
  level.min[c] = l
  level.max[c] = h
}

function clamp(v: number): number {
  return v > 1 ? 1 : v < -1 ? -1 : v
}

/** Builds the pyramid block by block; finish() moves the file into place. */
export class PeaksBuilder {
  private readonly levels: LevelWriter[]
  private readonly fd: number
  private readonly tmpPath: string
  private inPixel = 0 // samples of the current finest pixel seen so far
  private frames = 0
  private done = false

  constructor(
    private readonly path: string,
    private readonly f: { sampleRate: number; channels: number; frames: number },
  ) {
    this.tmpPath = `${path}.${process.pid}.${Math.random().toString(36).slice(2)}.tmp`
    this.fd = openSync(this.tmpPath, 'w')
    this.levels = planLevels(f.frames, f.channels).map((p) => new LevelWriter(p, f.channels, this.fd))
  }

  /**
   * Adds a block. With the block's scan (block-scan.ts) and the block starting on a 4-frame boundary,
   * pixels are built from its chunk lows and highs instead of from every sample.
   */
  push(planar: Float32Array[], scan?: BlockScan): void {
    const n = Math.min(planar[0]?.length ?? 0, this.f.frames - this.frames)
    const fromChunks = scan !== undefined && scan.frames === (planar[0]?.length ?? 0) && this.frames % CHUNK === 0
    const finest = this.levels[0]
    let offset = 0
    while (offset < n) {
      const end = Math.min(n, offset + BASE_SAMPLES_PER_PIXEL - this.inPixel)
      for (let c = 0; c < this.f.channels; c++) {
        // offset is a multiple of CHUNK here; a partial last chunk covers exactly the block's end.
        if (fromChunks) extend(finest, c, scan.lo[c], scan.hi[c], offset / CHUNK, Math.ceil(end / CHUNK))
        else extend(finest, c, planar[c], planar[c], offset, end)
      }
      this.inPixel += end - offset
      this.frames += end - offset
      offset = end
      if (this.inPixel === BASE_SAMPLES_PER_PIXEL) this.closePixel(0)
    }
  }

  // Hands a finished pixel of level k up to level k + 1, closing that one too when full.
  private closePixel(k: number): void {
    const level = this.levels[k]
    const parent = this.levels[k + 1]
    if (parent) parent.merge(level.min, level.max)
    level.emit()
    if (k === 0) this.inPixel = 0
    if (parent && parent.children === LEVEL_FACTOR) this.closePixel(k + 1)
  }

  finish(): void {
    if (this.done) return
    this.done = true
    try {
      if (this.inPixel > 0) this.closePixel(0)
      // Close partial pixels from the finest level up; each carries its content upwards.
      for (let k = 1; k < this.levels.length; k++) if (this.levels[k].children > 0) this.closePixel(k)
      for (const level of this.levels) level.flush()
      writeSync(this.fd, this.header(), 0, undefined, 0)
      closeSync(this.fd)
      renameSync(this.tmpPath, this.path)
    } catch (err) {
      this.abort()
      throw err
    }
  }

  /** Drops the partial file (after a failed analysis). */
  abort(): void {
    this.done = true
    try {
      closeSync(this.fd)
    } catch {
      // already closed
    }
    rmSync(this.tmpPath, { force: true })
  }

  private header(): Buffer {
    const b = Buffer.alloc(HEADER_BYTES + LEVEL_ENTRY_BYTES * this.levels.length)
    b.write(MAGIC, 0, 'latin1')
    b.writeUInt16LE(VERSION, 4)
    b.writeUInt16LE(this.f.channels, 6)
    b.writeUInt32LE(this.f.sampleRate, 8)
    b.writeDoubleLE(this.frames, 12)
    b.writeUInt16LE(this.levels.length, 20)
    this.levels.forEach((l, i) => {
      const at = HEADER_BYTES + LEVEL_ENTRY_BYTES * i
      b.writeUInt32LE(l.plan.samplesPerPixel, at)
      // A take that ended early has fewer pixels than planned; offsets stay as planned.
      b.writeUInt32LE(l.written, at + 4)
      b.writeDoubleLE(l.plan.offset, at + 8)
    })
    return b
  }
}

interface PeaksHeader {
  channels: number
  sampleRate: number
  frames: number
  levels: PeaksLevelPlan[]
}

function parseHeader(b: Buffer): PeaksHeader {
  if (b.length < HEADER_BYTES || b.toString('latin1', 0, 4) !== MAGIC) throw new Error('not a peaks file')
  if (b.readUInt16LE(4) !== VERSION) throw new Error(`unsupported peaks file version ${b.readUInt16LE(4)}`)
  const count = b.readUInt16LE(20)
  if (b.length < HEADER_BYTES + LEVEL_ENTRY_BYTES * count) throw new Error('truncated peaks file')
  const levels = Array.from({ length: count }, (_, i) => {
    const at = HEADER_BYTES + LEVEL_ENTRY_BYTES * i
    return { samplesPerPixel: b.readUInt32LE(at), pixels: b.readUInt32LE(at + 4), offset: b.readDoubleLE(at + 8) }
  })
  return { channels: b.readUInt16LE(6), sampleRate: b.readUInt32LE(8), frames: b.readDoubleLE(12), levels }
}

/** The finest level with at most maxPoints min/max pairs (else the coarsest), in the form wavesurfer.js takes. */
export async function readPeaks(path: string, opts: { maxPoints?: number } = {}): Promise<Peaks> {
  const maxPoints = opts.maxPoints ?? DEFAULT_MAX_POINTS
  const fh = await open(path, 'r')
  try {
    const head = Buffer.alloc(HEADER_BYTES + LEVEL_ENTRY_BYTES * 64)
    const { bytesRead } = await fh.read(head, 0, head.length, 0)
    const h = parseHeader(head.subarray(0, bytesRead))
    if (h.levels.length === 0) throw new Error('peaks file has no levels')
    const level = h.levels.find((l) => l.pixels <= maxPoints) ?? h.levels[h.levels.length - 1]
    const bytes = level.pixels * h.channels * 4
    const raw = Buffer.alloc(bytes)
    const got = (await fh.read(raw, 0, bytes, level.offset)).bytesRead
    if (got < bytes) throw new Error('truncated peaks file')
    const data: number[][] = Array.from({ length: h.channels }, () => new Array<number>(level.pixels * 2))
    for (let p = 0; p < level.pixels; p++) {
      for (let c = 0; c < h.channels; c++) {
        const at = (p * h.channels + c) * 4
        data[c][2 * p] = raw.readInt16LE(at) / SCALE
        data[c][2 * p + 1] = raw.readInt16LE(at + 2) / SCALE
      }
    }
    // Even the coarsest level can hold more pairs than asked for (a short take):
    // merge neighbouring pixels so the answer never exceeds maxPoints pairs.
    const factor = Math.ceil(level.pixels / Math.max(1, maxPoints))
    return {
      durationSeconds: h.frames / h.sampleRate,
      sampleRate: h.sampleRate,
      samplesPerPixel: level.samplesPerPixel * factor,
      data: factor > 1 ? data.map((ch) => mergePairs(ch, factor)) : data,
    }
  } finally {
    await fh.close()
  }
}

/** Every `factor` min/max pairs become one: the min of the mins and the max of the maxes. */
function mergePairs(ch: number[], factor: number): number[] {
  const pairs = ch.length / 2
  const out: number[] = []
  for (let p = 0; p < pairs; p += factor) {
    let lo = Infinity
    let hi = -Infinity
    for (let q = p; q < Math.min(pairs, p + factor); q++) {
      lo = Math.min(lo, ch[2 * q])
      hi = Math.max(hi, ch[2 * q + 1])
    }
    out.push(lo, hi)
  }
  return out
}

/** All levels of a peaks file, for tests and tools that need more than one resolution. */
export function readAllPeakLevels(path: string): { samplesPerPixel: number; data: number[][] }[] {
  const b = readFileSync(path)
  const h = parseHeader(b)
  return h.levels.map((l) => {
    const data: number[][] = Array.from({ length: h.channels }, () => [])
    for (let p = 0; p < l.pixels; p++) {
      for (let c = 0; c < h.channels; c++) {
        const at = l.offset + (p * h.channels + c) * 4
        data[c].push(b.readInt16LE(at) / SCALE, b.readInt16LE(at + 2) / SCALE)
      }
    }
    return { samplesPerPixel: l.samplesPerPixel, data }
  })
}
