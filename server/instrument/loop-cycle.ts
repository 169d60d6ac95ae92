// One cycle of a loop as a small float WAV, for the bench to play round and
// round (Web Audio's looping buffer source): the samples from start to end,
// and with a crossfade the last `crossfade` frames blended (equal power) with
// the frames just before the start, so the end flows into the start as the
// pack render's crossfaded loops do. Runs on a worker thread.
import { probeWav, readFrames } from '../audio/wav-reader'
import { encodeWav } from '../audio/wav-writer'

export interface LoopCycleTask {
  path: string
  startFrame: number
  endFrame: number
  crossfadeFrames: number
}

export async function runLoopCycleTask(t: LoopCycleTask): Promise<Uint8Array> {
  const info = await probeWav(t.path)
  const end = Math.min(t.endFrame, info.format.frames)
  // The crossfade borrows material from before the start; never more than there is, nor than half the loop.
  const fade = Math.max(0, Math.min(t.crossfadeFrames, t.startFrame, Math.floor((end - t.startFrame) / 2)))
  const from = t.startFrame - fade
  const channels = Array.from({ length: info.format.channels }, () => new Float32Array(end - from))
  let at = 0
  for await (const block of readFrames(t.path, info, { startFrame: from, endFrame: end })) {
    for (const [c, ch] of block.entries()) channels[c].set(ch, at)
    at += block[0].length
  }
  const cycle = channels.map((x) => {
    const y = x.slice(fade)
    const n = y.length
    for (let i = 0; i < fade; i++) {
      const g = (i + 0.5) / fade
      y[n - fade + i] = y[n - fade + i] * Math.cos((g * Math.PI) / 2) + x[i] * Math.sin((g * Math.PI) / 2)
    }
    return y
  })
  const wav = encodeWav(cycle, {
    sampleRate: info.format.sampleRate,
    channels: cycle.length,
    encoding: 'float',
    bitsPerSample: 32,
  })
  return new Uint8Array(wav.buffer, wav.byteOffset, wav.byteLength)
}
