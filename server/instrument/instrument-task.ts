// The worker-thread side of the instrument tools: read a range of a take once,
// run the pure detection (onsets.ts, loops.ts) and answer in frames of the
// range. Called from server/work/audio-worker.ts; imports no zod.
import { probeWav, readFrames } from '../audio/wav-reader'
import { detectOnsets, hopFrames, type OnsetSliceFrames } from './onsets'
import { findLoops, type LoopFrames } from './loops'
import { SplitFeatureTracker } from './split-features'
import { proposeSplits, type SplitSegmentFrames } from './split'

export interface OnsetTask {
  path: string
  startFrame: number
  endFrame: number
  sensitivity?: number
}

export interface LoopTask {
  path: string
  startFrame: number
  endFrame: number
  approxFrames?: number
  minFrames: number
}

/**
 * The channels' mean over [start, end) (its signs are those of the sum the render's loop cuts use,
 * so the same zero crossings) and, optionally, per-hop peaks of any channel.
 */
async function readRange(path: string, start: number, end: number, hop?: number) {
  const info = await probeWav(path)
  const to = Math.min(end, info.format.frames)
  const mono = new Float32Array(Math.max(0, to - start))
  const peaks = hop ? new Float32Array(Math.ceil(mono.length / hop)) : undefined
  let at = 0
  for await (const block of readFrames(path, info, { startFrame: start, endFrame: to })) {
    const n = block[0].length
    for (const ch of block) {
      for (let i = 0; i < n; i++) {
        mono[at + i] += ch[i]
        if (peaks) {
          const h = ((at + i) / hop!) | 0
          const a = Math.abs(ch[i])
          if (a > peaks[h]) peaks[h] = a
        }
      }
    }
    at += n
  }
  const k = 1 / info.format.channels
  if (k !== 1) for (let i = 0; i < mono.length; i++) mono[i] *= k
  return { mono, peaks, sampleRate: info.format.sampleRate }
}

export async function runOnsetTask(t: OnsetTask): Promise<OnsetSliceFrames[]> {
  const info = await probeWav(t.path)
  const hop = hopFrames(info.format.sampleRate)
  const { mono, peaks, sampleRate } = await readRange(t.path, t.startFrame, t.endFrame, hop)
  return detectOnsets(mono, { sampleRate, sensitivity: t.sensitivity, peaks })
}

export async function runLoopTask(t: LoopTask): Promise<LoopFrames[]> {
  const { mono, sampleRate } = await readRange(t.path, t.startFrame, t.endFrame)
  return findLoops(mono, { sampleRate, approxLength: t.approxFrames, minLength: t.minFrames })
}

export interface SplitTask {
  path: string
  minSegmentSeconds: number
  sensitivity?: number
}

/** Features are gathered as the take streams by (its samples are never all held), then judged. */
export async function runSplitTask(t: SplitTask): Promise<SplitSegmentFrames[]> {
  const info = await probeWav(t.path)
  const sr = info.format.sampleRate
  // 10 ms frames, coarser past an hour so the features of a long sweep stay a few tens of MB.
  const hop = Math.round((sr / 100) * Math.max(1, Math.ceil(info.format.durationSeconds / 3600)))
  const tracker = new SplitFeatureTracker(sr, hop)
  for await (const block of readFrames(t.path, info)) tracker.push(block)
  return proposeSplits(tracker.finish(), { minSegmentSeconds: t.minSegmentSeconds, sensitivity: t.sensitivity })
}
