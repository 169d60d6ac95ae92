// Runs on a heavy-work thread (server/work/audio-worker.ts), never on the API's
// event loop: reads the excerpt of the take block by block, feeds the curve's
// tracker and writes the file in memory (at most MODULATION_LIMITS.maxPoints
// points, so a few tens of MB at worst).
import { probeWav, readFrames } from '../audio/wav-reader'
import { EnvelopeFollower, SpectralTracker, spectralContext, type CurveTracker } from './curves'
import { curveFile, type ModulationFile, type ModulationOrder } from './modulation-files'
import { KWeighting } from './k-weighted'

export async function computeModulation(path: string, o: ModulationOrder): Promise<ModulationFile> {
  const info = await probeWav(path)
  const rate = info.format.sampleRate
  const startFrame = Math.min(info.format.frames, Math.round(o.startSeconds * rate))
  const endFrame = Math.min(info.format.frames, Math.max(startFrame, Math.round(o.endSeconds * rate)))
  const frames = endFrame - startFrame
  const timing = { attackMs: o.attackMs, releaseMs: o.releaseMs, rateHz: o.rateHz }
  // Spectral frames around an excerpt's ends also see the take beyond them (half a frame).
  const context = o.source === 'envelope' ? 0 : spectralContext(rate)
  const lead = Math.min(startFrame, context)
  const tail = Math.min(info.format.frames - endFrame, context)
  const tracker: CurveTracker =
    o.source === 'envelope'
      ? new EnvelopeFollower(rate, frames, timing)
      : new SpectralTracker(rate, frames, { kind: o.source, ...timing }, lead)
  const weighting = o.source === 'envelope' && o.weighting === 'k' ? new KWeighting(rate, info.format.channels) : null
  for await (const block of readFrames(path, info, {
    startFrame: startFrame - lead,
    endFrame: endFrame + tail,
    recycle: 2,
  }))
    tracker.push(weighting ? weighting.apply(block) : block)
  return curveFile(tracker.finish(), o)
}
