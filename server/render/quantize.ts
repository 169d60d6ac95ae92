// Gain, fades and word-length reduction of one block, in place, in one pass per
// channel. The samples leave here exactly on the output grid (k / 2^(bits−1)
// for PCM), so the writer's rounding is a no-op and the meter sees the very
// values written to the file.
//
// Dither: TPDF of ±1 LSB (peak), the sum of two independent uniform values,
// taken as the two 16-bit halves of one xorshift32 draw (common practice: a
// cheap generator is enough for dither; it only has to be white and
// uncorrelated with the signal). Seeded, so a render is reproducible.

export interface Envelope {
  /** Linear gain. */
  gain: number
  /** Frames of the whole item. */
  total: number
  /** Fade lengths in frames (0: none). Equal-power: sin(π/2 · k / n), so the first and last frames are 0. */
  fadeIn: number
  fadeOut: number
}

export interface Quantizer {
  /** 0 for float output (no rounding); else 2^(bits−1). */
  scale: number
  dither: boolean
  /** Frames that get plain rounding with no dither (loop boundaries keep their sign). */
  plainFirst: boolean
  plainLast: boolean
}

/** State of the dither generator (xorshift32), carried from block to block. */
export interface DitherState {
  state: number
}

export const ditherState = (seed: number): DitherState => ({ state: seed >>> 0 || 0x2545f491 })

// Adding then subtracting 1.5 · 2^52 rounds a double to the nearest integer (ties to even)
// in two additions, much cheaper than Math.round in the hot loop.
const ROUND = 6755399441055744

/**
 * Processes frames [pos, pos + n) of the item held in block[c][0..n). For PCM output, `ints`
 * (when given, one array per channel of at least n) also receives each sample as the integer the
 * file stores, so the writer packs bytes without converting again (WavWriter.writeInts).
 */
export function processBlock(
  block: Float32Array[],
  pos: number,
  env: Envelope,
  q: Quantizer,
  rng: DitherState,
  ints?: Int32Array[],
): void {
  const n = block[0]?.length ?? 0
  if (n === 0) return
  const g = env.gain
  const scale = q.scale
  const halfPi = Math.PI / 2
  const fadeInEnd = Math.min(n, env.fadeIn - pos)
  const fadeOutFrom = Math.max(0, env.total - env.fadeOut - pos)
  // Frames of this block rounded without dither (loop boundaries), or -1.
  const kFirst = q.plainFirst && pos === 0 ? 0 : -1
  const kLast = q.plainLast && env.total - 1 - pos < n ? env.total - 1 - pos : -1
  let s = rng.state
  for (let c = 0; c < block.length; c++) {
    const x = block[c]
    // The fade envelopes touch only the first and last few milliseconds.
    for (let i = 0; i < fadeInEnd; i++) x[i] *= Math.sin((halfPi * (pos + i)) / env.fadeIn)
    for (let i = fadeOutFrom; i < n; i++) x[i] *= Math.sin((halfPi * (env.total - 1 - (pos + i))) / env.fadeOut)
    if (scale === 0) {
      for (let k = 0; k < n; k++) x[k] *= g
      continue
    }
    const gs = g * scale
    const inv = 1 / scale
    const hi = scale - 1
    const lo = -scale
    const rawFirst = kFirst >= 0 ? x[kFirst] : 0
    const rawLast = kLast >= 0 ? x[kLast] : 0
    // Without `ints` the integers go to a scratch array (one code path, one dither sequence).
    const out = ints ? ints[c] : scratch(n)
    if (q.dither) {
      for (let k = 0; k < n; k++) {
        s ^= s << 13
        s ^= s >>> 17
        s ^= s << 5
        let v = x[k] * gs + ((s & 0xffff) - (s >>> 16)) * (1 / 65536)
        v = v + ROUND - ROUND
        v = v > hi ? hi : v < lo ? lo : v === v ? v : 0 // the last test maps NaN to 0
        out[k] = v
        x[k] = v * inv
      }
    } else {
      for (let k = 0; k < n; k++) {
        let v = x[k] * gs
        v = v + ROUND - ROUND
        v = v > hi ? hi : v < lo ? lo : v === v ? v : 0
        out[k] = v
        x[k] = v * inv
      }
    }
    if (kFirst >= 0) x[kFirst] = (out[kFirst] = plain(rawFirst * gs, lo, hi)) * inv
    if (kLast >= 0) x[kLast] = (out[kLast] = plain(rawLast * gs, lo, hi)) * inv
  }
  rng.state = s
}

let scratchInts = new Int32Array(0)
function scratch(n: number): Int32Array {
  if (scratchInts.length < n) scratchInts = new Int32Array(n)
  return scratchInts
}

/** Rounding alone: a sample ≥ 0 stays ≥ 0 and one < 0 stays ≤ 0, so a zero crossing survives. */
function plain(v: number, lo: number, hi: number): number {
  const r = Math.round(v)
  return r > hi ? hi : r < lo ? lo : r === r ? r : 0
}
