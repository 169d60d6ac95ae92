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

/** Processes frames [pos, pos + n) of the item held in block[c][0..n). */
export function processBlock(block: Float32Array[], pos: number, env: Envelope, q: Quantizer, rng: DitherState): void {
  const n = block[0]?.length ?? 0
  if (n === 0) return
  const g = env.gain
  const fi = env.fadeIn
  const fo = env.fadeOut
  const foStart = env.total - fo
  const scale = q.scale
  const inv = scale > 0 ? 1 / scale : 0
  const hi = scale - 1
  const lo = -scale
  const halfPi = Math.PI / 2
  // Frames of this block that are rounded without dither (or -1).
  const kFirst = q.plainFirst && pos === 0 ? 0 : -1
  const kLast = q.plainLast && env.total - 1 - pos < n ? env.total - 1 - pos : -1
  let s = rng.state
  for (let c = 0; c < block.length; c++) {
    const x = block[c]
    // Gain, with the fade envelope only where a fade lies.
    const fadeInEnd = Math.min(n, fi - pos)
    let i = 0
    for (; i < fadeInEnd; i++) x[i] *= g * Math.sin((halfPi * (pos + i)) / fi)
    const plainEnd = Math.min(n, foStart - pos)
    for (; i < plainEnd; i++) x[i] *= g
    for (; i < n; i++) x[i] *= g * Math.sin((halfPi * (env.total - 1 - (pos + i))) / fo)
    if (scale === 0) continue
    if (q.dither) {
      for (let k = 0; k < n; k++) {
        s ^= s << 13
        s ^= s >>> 17
        s ^= s << 5
        const d = k === kFirst || k === kLast ? 0 : ((s & 0xffff) - (s >>> 16)) * (1 / 65536)
        let v = Math.round(x[k] * scale + d)
        v = v > hi ? hi : v < lo ? lo : v === v ? v : 0 // the last test maps NaN to 0
        x[k] = v * inv
      }
    } else {
      for (let k = 0; k < n; k++) {
        let v = Math.round(x[k] * scale)
        v = v > hi ? hi : v < lo ? lo : v === v ? v : 0
        x[k] = v * inv
      }
    }
  }
  rng.state = s
}
