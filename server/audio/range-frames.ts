// The mel bands of a stretch of a take that the analysis's excerpts missed: a
// region in a long take (the character excerpts cover at most 8 × 4 s). A
// region's sounds-like vector is made of the frames inside it
// (server/similar/), so without these a region there would have none.
import { probeWav, readFrames } from './wav-reader'
import { ExcerptAnalyser } from './character-frames'
import { meanOfChannels } from './mix-down'

/** At most this much of the stretch is read, from its middle: as much as one analysis excerpt. */
const MOST_SECONDS = 4

export interface RangeFrames {
  /** Start of each long frame in seconds from the start of the take. */
  frameTimes: number[]
  /** MEL_BANDS values per frame, as the analysis stores them. */
  frameMel: number[]
}

export async function rangeFrames(path: string, startSeconds: number, endSeconds: number): Promise<RangeFrames> {
  const info = await probeWav(path)
  const rate = info.format.sampleRate
  const middle = (startSeconds + endSeconds) / 2
  const half = Math.min(endSeconds - startSeconds, MOST_SECONDS) / 2
  const start = Math.max(0, Math.round((middle - half) * rate))
  const end = Math.min(info.format.frames, Math.round((middle + half) * rate))
  const mono = new Float32Array(Math.max(0, end - start))
  let at = 0
  for await (const block of readFrames(path, info, { startFrame: start, endFrame: end })) {
    meanOfChannels(mono, at, block, 0, block[0].length)
    at += block[0].length
  }
  const frames = new ExcerptAnalyser(rate).measure(mono, start / rate).frames
  return { frameTimes: frames.map((f) => f.at), frameMel: frames.flatMap((f) => Array.from(f.mel)) }
}
