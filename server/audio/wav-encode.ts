// Planar numbers -> interleaved little-endian sample bytes. PCM is rounded to the
// valid bits, clipped to their range and left-justified in the container (so a reader
// dividing by 2^(containerBits-1) gets the value back); float is written as given.
import { endianness } from 'node:os'

const LE = endianness() === 'LE'

export interface EncodeFormat {
  encoding: 'pcm' | 'float'
  bitsPerSample: number
  validBitsPerSample: number
  channels: number
}

/** Triangular (TPDF) dither source: difference of two uniforms from a seeded mulberry32 PRNG, in (−1, 1). */
export class Tpdf {
  private s: number
  constructor(seed = 0x5eed) {
    this.s = seed >>> 0
  }
  private u(): number {
    let t = (this.s = (this.s + 0x6d2b79f5) >>> 0)
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
  next(): number {
    return this.u() - this.u()
  }
}

/** One PCM sample on the valid-bits grid: rounded (with dither when given), clipped; NaN maps to 0. */
function quantize(x: number, scale: number, lo: number, hi: number, dither: Tpdf | null): number {
  const u = x * scale + (dither ? dither.next() : 0)
  // Samples already on the grid (a render's are: quantize.ts) are integers here; Math.round is
  // the costly part of the loop, so it runs only for the others (and NaN, ±Infinity, |u| ≥ 2^31).
  const t = u | 0
  const v = t === u ? t : Math.round(u)
  return v > hi ? hi : v < lo ? lo : v === v ? v : 0 // the last test maps NaN to 0
}

/**
 * Encode frames [from, from+frames) of `planar` into `buf` (byteOffset a multiple of 8).
 * `dither` (PCM only) adds ±1 LSB triangular noise before rounding.
 */
export function encodeInterleaved(
  planar: ArrayLike<number>[],
  from: number,
  frames: number,
  f: EncodeFormat,
  buf: Buffer,
  dither: Tpdf | null,
): void {
  const ch = f.channels
  const n = frames * ch
  const ab = buf.buffer
  const off = buf.byteOffset
  if (f.encoding === 'float') {
    // Little-endian hosts interleave straight into buf (aligned: byteOffset a multiple of 8).
    const dst =
      f.bitsPerSample === 32
        ? LE
          ? new Float32Array(ab, off, n)
          : new Float32Array(n)
        : LE
          ? new Float64Array(ab, off, n)
          : new Float64Array(n)
    for (let c = 0; c < ch; c++) {
      const src = planar[c]
      for (let i = 0, j = c; i < frames; i++, j += ch) dst[j] = src[from + i]
    }
    if (LE) return
    if (f.bitsPerSample === 32) for (let i = 0; i < n; i++) buf.writeFloatLE(dst[i], i * 4)
    else for (let i = 0; i < n; i++) buf.writeDoubleLE(dst[i], i * 8)
    return
  }
  const scale = 2 ** (f.validBitsPerSample - 1)
  const lo = -scale
  const hi = scale - 1
  const shift = 2 ** (f.bitsPerSample - f.validBitsPerSample)
  // Each sample is rounded, clipped and stored straight into its interleaved place (channel by
  // channel, so the dither sequence is the same as ever): no intermediate array, one pass.
  switch (f.bitsPerSample) {
    case 8:
      for (let c = 0; c < ch; c++) {
        const src = planar[c]
        for (let i = 0, j = c; i < frames; i++, j += ch)
          buf[j] = quantize(src[from + i], scale, lo, hi, dither) * shift + 128
      }
      return
    case 16: {
      const dst = LE ? new Int16Array(ab, off, n) : new Int16Array(n)
      for (let c = 0; c < ch; c++) {
        const src = planar[c]
        for (let i = 0, j = c; i < frames; i++, j += ch) dst[j] = quantize(src[from + i], scale, lo, hi, dither) * shift
      }
      if (!LE) for (let i = 0; i < n; i++) buf.writeInt16LE(dst[i], i * 2)
      return
    }
    case 24: {
      const dst = new Uint8Array(ab, off, n * 3)
      const step = ch * 3
      if (LE && ch === 2 && !dither && off % 4 === 0) {
        encodeStereo24(
          planar[0],
          planar[1],
          from,
          frames,
          scale,
          lo,
          hi,
          shift,
          new Int32Array(ab, off, 3 * (frames >> 1)),
          dst,
        )
        return
      }
      for (let c = 0; c < ch; c++) {
        const src = planar[c]
        for (let i = 0, p = c * 3; i < frames; i++, p += step) {
          const v = quantize(src[from + i], scale, lo, hi, dither) * shift
          dst[p] = v & 0xff
          dst[p + 1] = (v >> 8) & 0xff
          dst[p + 2] = (v >> 16) & 0xff
        }
      }
      return
    }
    case 32: {
      const dst = LE ? new Int32Array(ab, off, n) : new Int32Array(n)
      for (let c = 0; c < ch; c++) {
        const src = planar[c]
        for (let i = 0, j = c; i < frames; i++, j += ch) dst[j] = quantize(src[from + i], scale, lo, hi, dither) * shift
      }
      if (!LE) for (let i = 0; i < n; i++) buf.writeInt32LE(dst[i], i * 4)
      return
    }
    default:
      throw new RangeError(`no encoder for ${f.bitsPerSample}-bit PCM`)
  }
}

/**
 * 24-bit stereo without dither on a little-endian host: two frames (12 bytes) go out as three
 * 32-bit words instead of twelve byte stores. The same samples (quantize), so the same bytes.
 */
function encodeStereo24(
  l: ArrayLike<number>,
  r: ArrayLike<number>,
  from: number,
  frames: number,
  scale: number,
  lo: number,
  hi: number,
  shift: number,
  w: Int32Array,
  dst: Uint8Array,
): void {
  const pairs = frames >> 1
  for (let p = 0, i = from, j = 0; p < pairs; p++, i += 2, j += 3) {
    const a = quantize(l[i], scale, lo, hi, null) * shift
    const b = quantize(r[i], scale, lo, hi, null) * shift
    const c = quantize(l[i + 1], scale, lo, hi, null) * shift
    const d = quantize(r[i + 1], scale, lo, hi, null) * shift
    w[j] = (a & 0xffffff) | (b << 24)
    w[j + 1] = ((b >> 8) & 0xffff) | (c << 16)
    w[j + 2] = ((c >> 16) & 0xff) | (d << 8)
  }
  if (frames & 1) {
    const i = from + frames - 1
    const p = (frames - 1) * 6
    const a = quantize(l[i], scale, lo, hi, null) * shift
    const b = quantize(r[i], scale, lo, hi, null) * shift
    dst[p] = a & 0xff
    dst[p + 1] = (a >> 8) & 0xff
    dst[p + 2] = (a >> 16) & 0xff
    dst[p + 3] = b & 0xff
    dst[p + 4] = (b >> 8) & 0xff
    dst[p + 5] = (b >> 16) & 0xff
  }
}

/**
 * Integer samples already on the output grid (a render's: quantize.ts), one Int32Array per
 * channel, into interleaved little-endian PCM of `bits` (16 or 24) in `buf` (byteOffset a
 * multiple of 4). No rounding or clipping is left to do, so this is pure byte packing.
 */
export function encodeIntsInterleaved(ints: Int32Array[], frames: number, bits: 16 | 24, buf: Buffer): void {
  const ch = ints.length
  if (bits === 16) {
    const dst = LE ? new Int16Array(buf.buffer, buf.byteOffset, frames * ch) : null
    for (let c = 0; c < ch; c++) {
      const src = ints[c]
      if (dst) for (let i = 0, j = c; i < frames; i++, j += ch) dst[j] = src[i]
      else for (let i = 0, j = c * 2; i < frames; i++, j += ch * 2) buf.writeInt16LE(src[i], j)
    }
    return
  }
  if (LE && ch === 2 && buf.byteOffset % 4 === 0) {
    // Two frames (12 bytes) as three 32-bit words.
    const w = new Int32Array(buf.buffer, buf.byteOffset, 3 * (frames >> 1))
    const l = ints[0]
    const r = ints[1]
    const pairs = frames >> 1
    for (let p = 0, i = 0, j = 0; p < pairs; p++, i += 2, j += 3) {
      const a = l[i],
        b = r[i],
        c = l[i + 1],
        d = r[i + 1]
      w[j] = (a & 0xffffff) | (b << 24)
      w[j + 1] = ((b >> 8) & 0xffff) | (c << 16)
      w[j + 2] = ((c >> 16) & 0xff) | (d << 8)
    }
    if (frames & 1) {
      const i = frames - 1
      const o = buf.byteOffset + i * 6
      const u = new Uint8Array(buf.buffer, o, 6)
      const a = l[i],
        b = r[i]
      u[0] = a & 0xff
      u[1] = (a >> 8) & 0xff
      u[2] = (a >> 16) & 0xff
      u[3] = b & 0xff
      u[4] = (b >> 8) & 0xff
      u[5] = (b >> 16) & 0xff
    }
    return
  }
  const dst = new Uint8Array(buf.buffer, buf.byteOffset, frames * ch * 3)
  const step = ch * 3
  for (let c = 0; c < ch; c++) {
    const src = ints[c]
    for (let i = 0, p = c * 3; i < frames; i++, p += step) {
      const v = src[i]
      dst[p] = v & 0xff
      dst[p + 1] = (v >> 8) & 0xff
      dst[p + 2] = (v >> 16) & 0xff
    }
  }
}
