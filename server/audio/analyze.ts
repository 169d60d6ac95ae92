// Measures one WAVE file in a single streaming pass: levels, loudness, noise
// floor and spectrum, plus the waveform overview when a peaks path is given.
import { open } from 'node:fs/promises'
import type { Analysis, WavFormat } from '@shared/schemas/analysis'
import { CharacterMeter, type TakeFeatures } from './character'
import type { TakeGlyph } from '@shared/schemas/takes'
import { GlyphMeter } from './glyph'
import { Meter, type MeterResult } from './meter'
import { PeaksBuilder } from './peaks'
import { probeWav, readFrames, readMetadata, type WavInfo } from './wav-reader'

export interface AnalyzeOptions {
  /** Where to write the waveform overview (see peaks.ts); none when omitted. */
  peaksPath?: string
  /** Fraction 0..1 of frames measured; called at most about 100 times, and with 1 at the end. */
  onProgress?: (fraction: number) => void
}

export interface AnalyzeResult {
  format: WavFormat
  analysis: Analysis
  /** The library row's small spectrogram (glyph.ts). */
  glyph: TakeGlyph
  /** The sounds-like features (kept apart from the analysis: the library never sends them). */
  features?: TakeFeatures
}

/** Throws WavFormatError (from the reader) for files it cannot interpret. */
export async function analyzeFile(path: string, opts: AnalyzeOptions = {}): Promise<AnalyzeResult> {
  const info = await probeWav(path)
  const { format } = info
  const scale = format.encoding === 'float' && format.bitsPerSample === 64 ? await float64Scale(path, info) : 1
  const meter = new Meter({
    scale,
    sampleRate: format.sampleRate,
    channels: format.channels,
    channelMask: format.channelMask,
    frames: format.frames,
    encoding: format.encoding,
    validBitsPerSample: format.validBitsPerSample,
  })
  const character = new CharacterMeter(format.sampleRate, format.frames)
  const peaks = opts.peaksPath
    ? new PeaksBuilder(opts.peaksPath, {
        sampleRate: format.sampleRate,
        channels: format.channels,
        frames: format.frames,
      })
    : null
  const glyph = new GlyphMeter(format.sampleRate, format.channels, format.frames)
  try {
    let done = 0
    let reported = 0
    // Every meter is done with a block when push returns (they copy what they keep), so the reader
    // may refill the arrays of the block before last: no fresh arrays, less garbage collection.
    for await (const block of readFrames(path, info, { float64Scale: scale, recycle: 2 })) {
      meter.push(block)
      character.push(block)
      glyph.push(block)
      peaks?.push(block, meter.lastScan)
      done += block[0]?.length ?? 0
      const fraction = format.frames > 0 ? done / format.frames : 1
      if (opts.onProgress && fraction - reported >= 0.01) {
        reported = fraction
        opts.onProgress(Math.min(1, fraction))
      }
    }
    const metadata = await readMetadata(path, info)
    peaks?.finish()
    opts.onProgress?.(1)
    const measured = unscale(meter.finish(), scale)
    const { character: described, features } = character.finish(measured.spectrum)
    return {
      format,
      analysis: { ...measured, metadata, character: described },
      glyph: glyph.finish(measured.spectrum),
      features,
    }
  } catch (err) {
    peaks?.abort()
    throw err
  }
}

/** Above this a float-64 sample would be near or past the float-32 range (3.4e38): measure scaled. */
const FLOAT32_SAFE = 1e30

/**
 * Float-64 files whose samples go beyond what float-32 holds (a processing error upstream, or a
 * file meant to be normalised later) are measured scaled by 2^−e so the largest sample is at most
 * 1, and every level is put back by +20·log10(2^e) dB (unscale). One extra read of the samples,
 * only for float-64 files. Gates (−70 LUFS, −100 dBFS) then apply to the scaled signal.
 */
async function float64Scale(path: string, info: WavInfo): Promise<number> {
  const fh = await open(path, 'r')
  let peak = 0
  try {
    const buf = Buffer.allocUnsafeSlow(1 << 20)
    for (let pos = 0; pos < info.dataBytes; pos += buf.length) {
      const { bytesRead } = await fh.read(buf, 0, Math.min(buf.length, info.dataBytes - pos), info.dataOffset + pos)
      if (bytesRead === 0) break
      const x = new Float64Array(buf.buffer, 0, Math.floor(bytesRead / 8))
      for (let i = 0; i < x.length; i++) {
        const a = Math.abs(x[i])
        if (a > peak && a !== Infinity) peak = a
      }
    }
  } finally {
    await fh.close()
  }
  return peak > FLOAT32_SAFE ? 2 ** -Math.ceil(Math.log2(peak)) : 1
}

/** Puts the levels of a scaled measurement back (see float64Scale). */
function unscale(r: MeterResult, scale: number): MeterResult {
  if (scale === 1) return r
  const up = -20 * Math.log10(scale)
  const add = (v: number | null | undefined) => (v === null || v === undefined ? v : v + up)
  const l = r.levels
  return {
    ...r,
    levels: {
      ...l,
      samplePeakDbfs: add(l.samplePeakDbfs)!,
      truePeakDbtp: add(l.truePeakDbtp)!,
      rmsDbfs: add(l.rmsDbfs)!,
      preciseTruePeakDbtp: add(l.preciseTruePeakDbtp),
      channels: l.channels.map((c) => ({
        ...c,
        samplePeakDbfs: add(c.samplePeakDbfs)!,
        truePeakDbtp: add(c.truePeakDbtp)!,
        rmsDbfs: add(c.rmsDbfs)!,
        preciseTruePeakDbtp: add(c.preciseTruePeakDbtp),
        noiseFloorDbfs: add(c.noiseFloorDbfs),
        dcOffset: c.dcOffset / scale,
      })),
    },
    loudness: {
      ...r.loudness,
      integratedLufs: add(r.loudness.integratedLufs)!,
      maxMomentaryLufs: add(r.loudness.maxMomentaryLufs)!,
      maxShortTermLufs: add(r.loudness.maxShortTermLufs)!,
      shortSoundLufs: add(r.loudness.shortSoundLufs),
    },
    noiseFloorDbfs: add(r.noiseFloorDbfs)!,
    noiseFloor: { ...r.noiseFloor, dbfs: add(r.noiseFloor.dbfs)! },
    spectrum: { ...r.spectrum, tonalPeaks: r.spectrum.tonalPeaks.map((p) => ({ ...p, db: p.db + up })) },
  }
}
