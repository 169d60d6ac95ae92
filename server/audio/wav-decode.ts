// Interleaved little-endian sample bytes -> planar Float32Array, the hot path of
// every analysis. Typed-array views over an 8-byte aligned buffer avoid per-sample
// DataView calls; one tight loop per channel keeps the JIT on a monomorphic path.
import { endianness } from 'node:os'

const LE = endianness() === 'LE'

export interface DecodeFormat {
  encoding: 'pcm' | 'float'
  bitsPerSample: number
  channels: number
}

/**
 * Decode `frames` whole frames from `buf` (whose byteOffset must be a multiple of 8,
 * e.g. from Buffer.allocUnsafeSlow) into out[c][0..frames).
 */
export function decodeInterleaved(
  buf: Buffer,
  frames: number,
  f: DecodeFormat,
  out: Float32Array[],
  float64Scale = 1,
): void {
  const ch = f.channels
  const n = frames * ch
  const ab = buf.buffer
  const off = buf.byteOffset
  if (f.encoding === 'float') {
    if (f.bitsPerSample === 32) {
      const src = LE ? new Float32Array(ab, off, n) : readAll(buf, n, (i) => buf.readFloatLE(i * 4))
      spread(src, ch, frames, out, 1)
    } else {
      const src = LE ? new Float64Array(ab, off, n) : readAll(buf, n, (i) => buf.readDoubleLE(i * 8))
      // A power of two, so the scaling is exact: float-64 samples beyond the float-32 range are measured scaled.
      spread(src, ch, frames, out, float64Scale)
    }
    return
  }
  switch (f.bitsPerSample) {
    case 8: {
      const src = new Uint8Array(ab, off, n)
      for (let c = 0; c < ch; c++) {
        const o = out[c]
        for (let i = 0, j = c; i < frames; i++, j += ch) o[i] = (src[j] - 128) * (1 / 128)
      }
      return
    }
    case 16: {
      const src = LE ? new Int16Array(ab, off, n) : readAll(buf, n, (i) => buf.readInt16LE(i * 2))
      spread(src, ch, frames, out, 1 / 32768)
      return
    }
    case 24: {
      const src = new Uint8Array(ab, off, n * 3)
      const step = ch * 3
      const k = 1 / 8388608
      if (LE && ch === 2 && off % 4 === 0) {
        decodeStereo24(new Int32Array(ab, off, 3 * (frames >> 1)), src, frames, out[0], out[1], k)
        return
      }
      for (let c = 0; c < ch; c++) {
        const o = out[c]
        for (let i = 0, j = c * 3; i < frames; i++, j += step) {
          // Put the 3 bytes in the top of a 32-bit int, then arithmetic-shift back to sign-extend.
          o[i] = (((src[j] << 8) | (src[j + 1] << 16) | (src[j + 2] << 24)) >> 8) * k
        }
      }
      return
    }
    case 32: {
      const src = LE ? new Int32Array(ab, off, n) : readAll(buf, n, (i) => buf.readInt32LE(i * 4))
      spread(src, ch, frames, out, 1 / 2147483648)
      return
    }
    default:
      throw new Error(`decoder has no path for ${f.bitsPerSample}-bit PCM`)
  }
}

/**
 * 24-bit stereo on a little-endian host: two frames (12 bytes) are three 32-bit words, so it
 * takes three loads instead of twelve; the same integers, so the same floats, as the byte path.
 */
function decodeStereo24(
  w: Int32Array,
  src: Uint8Array,
  frames: number,
  l: Float32Array,
  r: Float32Array,
  k: number,
): void {
  const pairs = frames >> 1
  for (let p = 0, i = 0, j = 0; p < pairs; p++, i += 2, j += 3) {
    const w0 = w[j],
      w1 = w[j + 1],
      w2 = w[j + 2]
    l[i] = ((w0 << 8) >> 8) * k
    r[i] = (((w1 << 16) | ((w0 >>> 24) << 8)) >> 8) * k
    l[i + 1] = (((w2 << 24) | ((w1 >>> 16) << 8)) >> 8) * k
    r[i + 1] = (w2 >> 8) * k
  }
  if (frames & 1) {
    const i = frames - 1
    const j = i * 6
    l[i] = (((src[j] << 8) | (src[j + 1] << 16) | (src[j + 2] << 24)) >> 8) * k
    r[i] = (((src[j + 3] << 8) | (src[j + 4] << 16) | (src[j + 5] << 24)) >> 8) * k
  }
}

type Src = Int16Array | Int32Array | Float32Array | Float64Array

function spread(src: Src, ch: number, frames: number, out: Float32Array[], k: number): void {
  if (ch === 1) {
    const o = out[0]
    for (let i = 0; i < frames; i++) o[i] = src[i] * k
    return
  }
  for (let c = 0; c < ch; c++) {
    const o = out[c]
    for (let i = 0, j = c; i < frames; i++, j += ch) o[i] = src[j] * k
  }
}

/** Big-endian hosts only: a slow but correct copy into a native-order array. */
function readAll(_buf: Buffer, n: number, get: (i: number) => number): Float64Array {
  const a = new Float64Array(n)
  for (let i = 0; i < n; i++) a[i] = get(i)
  return a
}
