// Measures one WAVE file in a single streaming pass: levels, loudness, noise
// floor and spectrum, plus the waveform overview when a peaks path is given.
import type { Analysis, WavFormat } from '@shared/schemas/analysis'
import { Meter } from './meter'
import { PeaksBuilder } from './peaks'
import { probeWav, readFrames, readMetadata } from './wav-reader'

export interface AnalyzeOptions {
  /** Where to write the waveform overview (see peaks.ts); none when omitted. */
  peaksPath?: string
  /** Fraction 0..1 of frames measured; called at most about 100 times, and with 1 at the end. */
  onProgress?: (fraction: number) => void
}

export interface AnalyzeResult {
  format: WavFormat
  analysis: Analysis
}

/** Throws WavFormatError (from the reader) for files it cannot interpret. */
export async function analyzeFile(path: string, opts: AnalyzeOptions = {}): Promise<AnalyzeResult> {
  const info = await probeWav(path)
  const { format } = info
  const meter = new Meter({
    sampleRate: format.sampleRate,
    channels: format.channels,
    channelMask: format.channelMask,
    frames: format.frames,
    encoding: format.encoding,
    validBitsPerSample: format.validBitsPerSample,
  })
  const peaks = opts.peaksPath
    ? new PeaksBuilder(opts.peaksPath, { sampleRate: format.sampleRate, channels: format.channels, frames: format.frames })
    : null
  try {
    let done = 0
    let reported = 0
    for await (const block of readFrames(path, info)) {
      meter.push(block)
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
    return { format, analysis: { ...meter.finish(), metadata } }
  } catch (err) {
    peaks?.abort()
    throw err
  }
}
