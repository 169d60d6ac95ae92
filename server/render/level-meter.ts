// The engine's loudness and true-peak meters (the same classes the full Meter
// runs, ITU-R BS.1770-4), without the spectrum, noise-floor and level meters a
// render does not report: what a render needs, measured while it writes. The
// ceiling is enforced on the high-accuracy true peak (precise-true-peak.ts);
// the Annex 2 figure is reported beside it as the true peak (BS.1770).
import { channelWeights } from '../audio/channel-weights'
import { LoudnessMeter } from '../audio/loudness'
import { PreciseTruePeakMeter } from '../audio/precise-true-peak'
import { amplitudeDb, Meter } from '../audio/meter'
import { readFrames, type WavInfo } from '../audio/wav-reader'

export interface LevelReading {
  integratedLufs: number | null
  loudnessRangeLu: number | null
  maxMomentaryLufs: number | null
  maxShortTermLufs: number | null
  /** ITU-R BS.1770-4 Annex 2 (4×): the figure delivery specs name. */
  truePeakDbtp: number | null
  /** High-accuracy true peak (long windowed sinc): what the ceiling is held to. */
  preciseTruePeakDbtp: number | null
  /** K-weighted loudness over a sound shorter than 400 ms (no integrated loudness there). */
  shortSoundLufs: number | null
}

export class LevelMeter {
  private readonly loudness: LoudnessMeter
  private readonly precise: PreciseTruePeakMeter
  constructor(
    sampleRate: number,
    private readonly channels: number,
    channelMask: number,
  ) {
    this.loudness = new LoudnessMeter({ sampleRate, channels, weights: channelWeights(channels, channelMask) })
    this.precise = new PreciseTruePeakMeter(channels)
  }

  push(planar: Float32Array[]): void {
    this.loudness.push(planar)
    this.precise.push(planar)
  }

  finish(): LevelReading {
    const l = this.loudness.finish()
    let tp = 0
    let precise = 0
    this.precise.finish()
    for (let c = 0; c < this.channels; c++) {
      tp = Math.max(tp, this.precise.annex.peak(c))
      precise = Math.max(precise, this.precise.peak(c))
    }
    return {
      integratedLufs: l.integratedLufs,
      loudnessRangeLu: l.loudnessRangeLu,
      maxMomentaryLufs: l.maxMomentaryLufs,
      maxShortTermLufs: l.maxShortTermLufs,
      truePeakDbtp: amplitudeDb(tp),
      preciseTruePeakDbtp: amplitudeDb(Math.max(tp, precise)),
      shortSoundLufs: l.shortSoundLufs,
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
    preciseTruePeakDbtp: r.levels.preciseTruePeakDbtp ?? null,
    shortSoundLufs: r.loudness.shortSoundLufs ?? null,
  }
}
