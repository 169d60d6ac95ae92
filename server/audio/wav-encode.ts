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

/**
 * Encode frames [from, from+frames) of `planar` into `buf` (byteOffset a multiple of 8).
 * `dither` (PCM only) adds ±1 LSB triangular noise before rounding.
 */
export function encodeInterleaved(planar: ArrayLike<number>[], from: number, frames: number, f: EncodeFormat, buf: Buffer, dither: Tpdf | null): void {
  const ch = f.channels
  const n = frames * ch
  const ab = buf.buffer
  const off = buf.byteOffset
  if (f.encoding === 'float') {
    const dst = f.bitsPerSample === 32 ? new Float32Array(n) : new Float64Array(n)
    for (let c = 0; c < ch; c++) {
      const src = planar[c]
      for (let i = 0, j = c; i < frames; i++, j += ch) dst[j] = src[from + i]
    }
    const bytes = new Uint8Array(dst.buffer, 0, dst.byteLength)
    if (LE) buf.set(bytes)
    else if (f.bitsPerSample === 32) for (let i = 0; i < n; i++) buf.writeFloatLE(dst[i], i * 4)
    else for (let i = 0; i < n; i++) buf.writeDoubleLE(dst[i], i * 8)
    return
  }
  const scale = 2 ** (f.validBitsPerSample - 1)
  const lo = -scale
  const hi = scale - 1
  const shift = 2 ** (f.bitsPerSample - f.validBitsPerSample)
  const q = new Int32Array(n)
  for (let c = 0; c < ch; c++) {
    const src = planar[c]
    for (let i = 0, j = c; i < frames; i++, j += ch) {
      const x = src[from + i]
      let v = Math.round(x * scale + (dither ? dither.next() : 0))
      v = v > hi ? hi : v < lo ? lo : v === v ? v : 0 // the last test maps NaN to 0
      q[j] = v * shift
    }
  }
  switch (f.bitsPerSample) {
    case 8:
      for (let i = 0; i < n; i++) buf[i] = q[i] + 128
      return
    case 16:
      if (LE) new Int16Array(ab, off, n).set(q)
      else for (let i = 0; i < n; i++) buf.writeInt16LE(q[i], i * 2)
      return
    case 24:
      for (let i = 0, p = 0; i < n; i++, p += 3) {
        const v = q[i]
        buf[p] = v & 0xff
        buf[p + 1] = (v >> 8) & 0xff
        buf[p + 2] = (v >> 16) & 0xff
      }
      return
    case 32:
      if (LE) new Int32Array(ab, off, n).set(q)
      else for (let i = 0; i < n; i++) buf.writeInt32LE(q[i], i * 4)
      return
    default:
      throw new RangeError(`no encoder for ${f.bitsPerSample}-bit PCM`)
  }
}
