// The measurement engine: one streaming pass over planar blocks feeds every
// meter; finish() turns the totals into the shared result shape. Memory is
// bounded by the block size and fixed-size tables (and the loudness meter's
// 10 Hz block series, 16 bytes per 100 ms), not otherwise by the take's length.
//
// Invalid samples (NaN, ±infinity: a float file can hold them) are counted with
// their times and replaced by silence before any meter sees them, so one bad
// sample cannot void a measurement; peak, RMS and DC leave them out of their
// counts, the filters (loudness, spectrum) see a zero in their place.
import type { InvalidSamples, Levels, Loudness, NoiseFloor, Spectrum } from '@shared/schemas/analysis'
import { BlockScan } from './block-scan'
import { channelWeights } from './channel-weights'
import { LevelsMeter } from './levels'
import { LoudnessMeter, type LoudnessOptions } from './loudness'
import { NoiseFloorMeter } from './noise-floor'
import { PreciseTruePeakMeter } from './precise-true-peak'
import { SpectrumMeter } from './spectrum'

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
  /** Samples arrive multiplied by this power of two (float-64 beyond the float-32 range); see analyze.ts. */
  scale?: number
  onMomentary?: LoudnessOptions['onMomentary']
  onShortTerm?: LoudnessOptions['onShortTerm']
}

export interface MeterResult {
  levels: Levels
  loudness: Loudness
  noiseFloorDbfs: number | null
  noiseFloor: NoiseFloor
  spectrum: Spectrum
}

/** Times of invalid samples kept for the report. */
const INVALID_TIMES = 10

/** 20·log10 of a linear amplitude, or null for zero and non-finite values. */
export function amplitudeDb(linear: number): number | null {
  if (!(linear > 0) || !Number.isFinite(linear)) return null
  return 20 * Math.log10(linear)
}

export class Meter {
  private readonly channels: number
  private readonly levels: LevelsMeter
  private readonly precise: PreciseTruePeakMeter
  private readonly sampleRate: number
  private position = 0
  private readonly invalid: Float64Array
  private readonly invalidTimes: number[] = []
  private readonly loudness: LoudnessMeter
  private readonly noiseFloor: NoiseFloorMeter
  private readonly spectrum: SpectrumMeter
  private readonly scan: BlockScan

  constructor(f: MeterFormat) {
    this.channels = f.channels
    this.sampleRate = f.sampleRate
    this.invalid = new Float64Array(f.channels)
    this.precise = new PreciseTruePeakMeter(f.channels)
    // The true-peak kernel finds each chunk's low and high on its way; the scan leaves them to it.
    this.scan = new BlockScan(f.channels, { findsExtremes: false })
    this.levels = new LevelsMeter({
      channels: f.channels,
      encoding: f.encoding ?? 'pcm',
      validBitsPerSample: f.validBitsPerSample ?? 24,
      scale: f.scale,
    })
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
    // Any NaN or infinity makes its channel's sum of squares non-finite (finite float samples cannot).
    let bad = false
    for (let ch = 0; ch < this.channels; ch++) if (!Number.isFinite(this.scan.sumSquares[ch])) bad = true
    if (bad) {
      this.dropInvalid(planar)
      this.scan.scan(planar)
    }
    // First the true peak: it fills the scan's chunk lows and highs, which the levels read.
    this.precise.push(planar, this.scan)
    this.levels.add(planar, this.scan)
    this.noiseFloor.add(this.scan)
    this.loudness.push(planar)
    this.spectrum.push(planar)
    this.position += planar[0]?.length ?? 0
  }

  /** Counts NaN and infinite samples, notes when they occur, and puts silence in their place (in the caller's block). */
  private dropInvalid(planar: Float32Array[]): void {
    for (let ch = 0; ch < this.channels; ch++) {
      const x = planar[ch]
      for (let i = 0; i < x.length; i++) {
        if (Number.isFinite(x[i])) continue
        x[i] = 0
        this.invalid[ch]++
        const t = Math.floor(((this.position + i) / this.sampleRate) * 10) / 10
        const times = this.invalidTimes
        if (times.length < INVALID_TIMES && !times.includes(t)) times.push(t)
      }
    }
  }

  /** Summaries of the block pushed last, for other consumers of the same pass (the waveform overview). */
  get lastScan(): BlockScan {
    return this.scan
  }

  finish(): MeterResult {
    const floor = this.noiseFloor.finish()
    return {
      levels: this.levelsResult(floor.channels),
      loudness: this.loudness.finish(),
      noiseFloorDbfs: floor.noiseFloor.dbfs,
      noiseFloor: floor.noiseFloor,
      spectrum: this.spectrum.finish(),
    }
  }

  private levelsResult(floors: { dbfs: number | null; silent: boolean }[]): Levels {
    const channels = []
    let peak = 0
    let truePeak = 0
    let precisePeak = 0
    let sumSquares = 0
    let samples = 0
    let invalid = 0
    this.precise.finish()
    for (let ch = 0; ch < this.channels; ch++) {
      const t = this.levels.totals(ch)
      const tp = this.precise.annex.peak(ch)
      const precise = this.precise.peak(ch)
      const frames = t.frames - this.invalid[ch]
      const rms = frames > 0 ? Math.sqrt(t.sumSquares / frames) : 0
      const peakDb = amplitudeDb(t.peak)
      const rmsDb = amplitudeDb(rms)
      channels.push({
        samplePeakDbfs: peakDb,
        truePeakDbtp: amplitudeDb(tp),
        rmsDbfs: rmsDb,
        dcOffset: frames > 0 && Number.isFinite(t.sum) ? t.sum / frames : 0,
        crestFactorDb: peakDb !== null && rmsDb !== null ? peakDb - rmsDb : null,
        clippedSamples: t.clipped,
        longestClipSamples: t.longestClip,
        preciseTruePeakDbtp: amplitudeDb(precise),
        overFullScaleSamples: t.overFullScale,
        invalidSamples: this.invalid[ch],
        noiseFloorDbfs: floors[ch]?.dbfs ?? null,
        silent: floors[ch]?.silent ?? false,
      })
      peak = Math.max(peak, t.peak)
      truePeak = Math.max(truePeak, tp)
      precisePeak = Math.max(precisePeak, precise)
      sumSquares += t.sumSquares
      samples += frames
      invalid += this.invalid[ch]
    }
    const invalidSamples: InvalidSamples = { count: invalid, times: [...this.invalidTimes].sort((a, b) => a - b) }
    return {
      samplePeakDbfs: amplitudeDb(peak),
      truePeakDbtp: amplitudeDb(truePeak),
      rmsDbfs: samples > 0 ? amplitudeDb(Math.sqrt(sumSquares / samples)) : null,
      channels,
      preciseTruePeakDbtp: amplitudeDb(precisePeak),
      invalidSamples,
    }
  }
}
