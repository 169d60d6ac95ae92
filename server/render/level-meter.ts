// The engine's loudness and true-peak meters (the same classes the full Meter
// runs, ITU-R BS.1770-4), without the spectrum, noise-floor and level meters a
// render does not report: what a render needs, measured while it writes.
import { channelWeights } from '../audio/channel-weights'
import { LoudnessMeter } from '../audio/loudness'
import { TruePeakMeter } from '../audio/true-peak'
import { amplitudeDb, Meter } from '../audio/meter'
import { readFrames, type WavInfo } from '../audio/wav-reader'

export interface LevelReading {
  integratedLufs: number | null
  loudnessRangeLu: number | null
  maxMomentaryLufs: number | null
  maxShortTermLufs: number | null
  truePeakDbtp: number | null
}

export class LevelMeter {
  private readonly loudness: LoudnessMeter
  private readonly truePeak: TruePeakMeter
  constructor(
    sampleRate: number,
    private readonly channels: number,
    channelMask: number,
  ) {
    this.loudness = new LoudnessMeter({ sampleRate, channels, weights: channelWeights(channels, channelMask) })
    this.truePeak = new TruePeakMeter(channels)
  }

  push(planar: Float32Array[]): void {
    this.loudness.push(planar)
    this.truePeak.push(planar)
  }

  finish(): LevelReading {
    const l = this.loudness.finish()
    let tp = 0
    for (let c = 0; c < this.channels; c++) tp = Math.max(tp, this.truePeak.peak(c))
    return {
      integratedLufs: l.integratedLufs,
      loudnessRangeLu: l.loudnessRangeLu,
      maxMomentaryLufs: l.maxMomentaryLufs,
      maxShortTermLufs: l.maxShortTermLufs,
      truePeakDbtp: amplitudeDb(tp),
    }
  }
}

/** The first measuring pass of a range [start, end) of a file, with the engine's Meter. */
export async function measureRange(path: string, info: WavInfo, start: number, end: number): Promise<LevelReading> {
  const f = info.format
  const meter = new Meter({
    sampleRate: f.sampleRate,
    channels: f.channels,
    channelMask: f.channelMask,
    frames: end - start,
    encoding: f.encoding,
    validBitsPerSample: f.validBitsPerSample,
  })
  for await (const block of readFrames(path, info, { startFrame: start, endFrame: end })) meter.push(block)
  const r = meter.finish()
  return {
    integratedLufs: r.loudness.integratedLufs,
    loudnessRangeLu: r.loudness.loudnessRangeLu,
    maxMomentaryLufs: r.loudness.maxMomentaryLufs,
    maxShortTermLufs: r.loudness.maxShortTermLufs,
    truePeakDbtp: r.levels.truePeakDbtp,
  }
}
