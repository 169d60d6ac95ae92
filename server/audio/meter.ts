// The measurement engine: one streaming pass over planar blocks feeds every
// meter; finish() turns the totals into the shared result shape. Memory is
// bounded by the block size and fixed-size tables, not by the take's length.
import type { Levels, Loudness, Spectrum } from '@shared/schemas/analysis'
import { BlockScan } from './block-scan'
import { channelWeights } from './channel-weights'
import { LevelsMeter } from './levels'
import { LoudnessMeter, type LoudnessOptions } from './loudness'
import { NoiseFloorMeter } from './noise-floor'
import { SpectrumMeter } from './spectrum'
import { TruePeakMeter } from './true-peak'

export interface MeterFormat {
  sampleRate: number
  channels: number
  channelMask: number
  /**
   * Frame count announced by the header; places the spectrum segments. Without it segments are placed
   * as for a 10-minute take (a longer take is then sampled in its first 10 minutes only).
   */
  frames?: number
  encoding?: 'pcm' | 'float'
  /** Valid bits of PCM samples, for the full-scale threshold of the clipping rule. Default 24. */
  validBitsPerSample?: number
  onMomentary?: LoudnessOptions['onMomentary']
  onShortTerm?: LoudnessOptions['onShortTerm']
}

export interface MeterResult {
  levels: Levels
  loudness: Loudness
  noiseFloorDbfs: number | null
  spectrum: Spectrum
}

/** 20·log10 of a linear amplitude, or null for zero and non-finite values. */
export function amplitudeDb(linear: number): number | null {
  if (!(linear > 0) || !Number.isFinite(linear)) return null
  return 20 * Math.log10(linear)
}

export class Meter {
  private readonly channels: number
  private readonly levels: LevelsMeter
  private readonly truePeak: TruePeakMeter
  private readonly loudness: LoudnessMeter
  private readonly noiseFloor: NoiseFloorMeter
  private readonly spectrum: SpectrumMeter
  private readonly scan: BlockScan

  constructor(f: MeterFormat) {
    this.channels = f.channels
    this.scan = new BlockScan(f.channels)
    this.levels = new LevelsMeter({
      channels: f.channels,
      encoding: f.encoding ?? 'pcm',
      validBitsPerSample: f.validBitsPerSample ?? 24,
    })
    this.truePeak = new TruePeakMeter(f.channels)
    this.loudness = new LoudnessMeter({
      sampleRate: f.sampleRate,
      channels: f.channels,
      weights: channelWeights(f.channels, f.channelMask),
      onMomentary: f.onMomentary,
      onShortTerm: f.onShortTerm,
    })
    this.noiseFloor = new NoiseFloorMeter(f.sampleRate, f.channels)
    this.spectrum = new SpectrumMeter(f.sampleRate, f.channels, f.frames ?? f.sampleRate * 600)
  }

  push(planar: Float32Array[]): void {
    if (planar.length !== this.channels) throw new Error(`expected ${this.channels} channels, got ${planar.length}`)
    this.scan.scan(planar)
    this.levels.add(planar, this.scan)
    this.noiseFloor.add(this.scan)
    this.truePeak.push(planar)
    this.loudness.push(planar)
    this.spectrum.push(planar)
  }

  /** Summaries of the block pushed last, for other consumers of the same pass (the waveform overview). */
  get lastScan(): BlockScan {
    return this.scan
  }

  finish(): MeterResult {
    return {
      levels: this.levelsResult(),
      loudness: this.loudness.finish(),
      noiseFloorDbfs: this.noiseFloor.finish(),
      spectrum: this.spectrum.finish(),
    }
  }

  private levelsResult(): Levels {
    const channels = []
    let peak = 0
    let truePeak = 0
    let sumSquares = 0
    let samples = 0
    for (let ch = 0; ch < this.channels; ch++) {
      const t = this.levels.totals(ch)
      const tp = this.truePeak.peak(ch)
      const rms = t.frames > 0 ? Math.sqrt(t.sumSquares / t.frames) : 0
      const peakDb = amplitudeDb(t.peak)
      const rmsDb = amplitudeDb(rms)
      channels.push({
        samplePeakDbfs: peakDb,
        truePeakDbtp: amplitudeDb(tp),
        rmsDbfs: rmsDb,
        dcOffset: t.frames > 0 && Number.isFinite(t.sum) ? t.sum / t.frames : 0,
        crestFactorDb: peakDb !== null && rmsDb !== null ? peakDb - rmsDb : null,
        clippedSamples: t.clipped,
      })
      peak = Math.max(peak, t.peak)
      truePeak = Math.max(truePeak, tp)
      sumSquares += t.sumSquares
      samples += t.frames
    }
    return {
      samplePeakDbfs: amplitudeDb(peak),
      truePeakDbtp: amplitudeDb(truePeak),
      rmsDbfs: samples > 0 ? amplitudeDb(Math.sqrt(sumSquares / samples)) : null,
      channels,
    }
  }
}
