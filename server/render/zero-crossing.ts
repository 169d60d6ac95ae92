// Loop cut points on zero crossings of the mono sum (all channels added), so a
// loop neither starts nor wraps on a step. Both ends look for a rising crossing
// (mono[i−1] < 0 ≤ mono[i]), nearest first, within ±window of the asked frame:
// the render then runs [start, end) with mono[start] ≥ 0 and mono[end−1] < 0,
// and the wrap from the last frame to the first continues the source's own
// upward crossing. Without a rising crossing in the window, the frame of the
// smallest |mono| there is used (reported as not on a crossing).
import { readFrames, type WavInfo } from '../audio/wav-reader'

/** ±10 ms: one period of 100 Hz, so mains hum (50/60 Hz and its harmonics) nearly always offers a rising crossing. */
export const LOOP_SEARCH_SECONDS = 0.01

export interface LoopCut {
  start: number
  end: number
  onCrossings: boolean
}

async function monoWindow(path: string, info: WavInfo, from: number, to: number): Promise<Float32Array> {
  const out = new Float32Array(Math.max(0, to - from))
  let at = 0
  for await (const block of readFrames(path, info, { startFrame: from, endFrame: to })) {
    const n = block[0].length
    for (const ch of block) for (let i = 0; i < n; i++) out[at + i] += ch[i]
    at += n
  }
  return out
}

/** Index i in [lo, hi] (absolute frames) with mono[i−1] < 0 ≤ mono[i], nearest to `want`; `mono` starts at frame `base`. */
export function nearestRisingCrossing(
  mono: Float32Array,
  base: number,
  want: number,
  lo: number,
  hi: number,
): number | null {
  let best: number | null = null
  for (let i = Math.max(lo, base + 1); i <= Math.min(hi, base + mono.length - 1); i++) {
    if (mono[i - 1 - base] < 0 && mono[i - base] >= 0 && (best === null || Math.abs(i - want) < Math.abs(best - want)))
      best = i
  }
  return best
}

function quietest(mono: Float32Array, base: number, want: number, lo: number, hi: number): number {
  let best = Math.min(Math.max(want, lo), hi)
  let bestAbs = Infinity
  for (let i = Math.max(lo, base); i <= Math.min(hi, base + mono.length - 1); i++) {
    const a = Math.abs(mono[i - base])
    if (a < bestAbs || (a === bestAbs && Math.abs(i - want) < Math.abs(best - want))) {
      best = i
      bestAbs = a
    }
  }
  return best
}

/** Moves [start, end) of a loop to rising zero crossings within ±window frames, keeping start < end. */
export async function loopCut(
  path: string,
  info: WavInfo,
  start: number,
  end: number,
  windowFrames = Math.round(LOOP_SEARCH_SECONDS * info.format.sampleRate),
): Promise<LoopCut> {
  const frames = info.format.frames
  const w = Math.max(1, windowFrames)
  // Keep the two searches apart so the loop cannot collapse.
  const mid = Math.floor((start + end) / 2)
  const sLo = Math.max(1, start - w)
  const sHi = Math.min(start + w, mid, frames - 1)
  const eLo = Math.max(end - w, mid + 1)
  // The end frame is exclusive and needs mono[end] to exist, so at most frames − 1.
  const eHi = Math.min(end + w, frames - 1)
  if (sHi < sLo || eHi < eLo) return { start, end, onCrossings: false }
  const sMono = await monoWindow(path, info, sLo - 1, sHi + 1)
  const eMono = await monoWindow(path, info, eLo - 1, eHi + 1)
  const s = nearestRisingCrossing(sMono, sLo - 1, start, sLo, sHi)
  const e = nearestRisingCrossing(eMono, eLo - 1, end, eLo, eHi)
  return {
    start: s ?? quietest(sMono, sLo - 1, start, sLo, sHi),
    end: e ?? quietest(eMono, eLo - 1, end, eLo, eHi),
    onCrossings: s !== null && e !== null,
  }
}
