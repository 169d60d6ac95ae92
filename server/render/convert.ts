// The first stage of a render under an export profile: the item's range mapped to
// the profile's channels and resampled to its rate, streamed into a 32-bit float
// scratch file. The render then measures, normalises and ceilings THAT signal, so
// the delivered file meets its loudness target and true-peak ceiling after the
// conversion (a mono sum or a new rate changes both). Float keeps the resampler's
// overshoot above full scale until the gain brings it back under the ceiling.
//
// Resampling: libsamplerate (Erik de Castro Lopo's sinc converter) in the
// WebAssembly build of @alexanderolsen/libsamplerate-js, "medium quality"
// (121 dB signal-to-noise, 90 % of the band kept, per the libsamplerate docs):
// aliasing far below the −90 dB this trade asks for, at a third of the "best"
// converter's cost. Its `full` API keeps state between blocks, so memory stays a
// few blocks whatever the item's length. It has no end-of-input flush: the last
// frames are pushed out with silence and the output is cut to the exact length.
import libsamplerate from '@alexanderolsen/libsamplerate-js'
import type { ExportProfile } from '@shared/schemas/packs'
import { readFrames, type WavInfo } from '../audio/wav-reader'
import { WavWriter } from '../audio/wav-writer'

const BLOCK_FRAMES = 32768
/** libsamplerate's SRC_SINC_MEDIUM_QUALITY. */
const CONVERTER = libsamplerate.ConverterType.SRC_SINC_MEDIUM_QUALITY
/** Silence fed after the range so the converter's delay line empties (its filter is far shorter). */
const FLUSH_SECONDS = 0.05

export interface TargetFormat {
  sampleRate: number
  channels: number
  /** WAVE_FORMAT_EXTENSIBLE speaker mask: the source's when channels are kept, front centre for one channel. */
  channelMask: number | undefined
}

/** The format a profile asks of this source. */
export function targetFormat(info: WavInfo, p: ExportProfile): TargetFormat {
  const f = info.format
  const sampleRate = p.sampleRate === 'source' ? f.sampleRate : p.sampleRate
  const one = p.channels !== 'keep' || f.channels === 1
  return {
    sampleRate,
    channels: one ? 1 : f.channels,
    channelMask: one ? (f.channelMask ? 0x4 : undefined) : f.channelMask,
  }
}

/** Whether the profile changes the samples themselves (rate or channels); bit depth is the render's job. */
export function needsConversion(info: WavInfo, p: ExportProfile | null | undefined): p is ExportProfile {
  if (!p) return false
  const t = targetFormat(info, p)
  return t.sampleRate !== info.format.sampleRate || t.channels !== info.format.channels
}

/** "mono sum", "left channel"…, for the coding history. */
export function conversionText(info: WavInfo, p: ExportProfile): string {
  const t = targetFormat(info, p)
  const parts: string[] = []
  if (t.channels !== info.format.channels)
    parts.push(
      p.channels === 'mono'
        ? 'mono sum'
        : p.channels === 'right' && info.format.channels > 1
          ? 'right channel'
          : 'left channel',
    )
  if (t.sampleRate !== info.format.sampleRate)
    parts.push(`resampled ${info.format.sampleRate} to ${t.sampleRate} Hz (libsamplerate sinc, medium quality)`)
  return parts.join(', ')
}

/** Output frames for `frames` source frames at the new rate. */
export const convertedFrames = (frames: number, from: number, to: number): number => Math.round((frames * to) / from)

/** Maps one planar block to the profile's channels, interleaved for the converter. */
function mapChannels(block: Float32Array[], p: ExportProfile, out: number, dst: Float32Array): number {
  const n = block[0].length
  if (out > 1) {
    for (let ch = 0; ch < out; ch++) {
      const x = block[ch]
      for (let i = 0; i < n; i++) dst[i * out + ch] = x[i]
    }
  } else if (p.channels === 'mono' && block.length > 1) {
    // The mean of the channels: a sum would be up to 6 dB louder and is normalised afterwards anyway.
    const k = 1 / block.length
    for (let i = 0; i < n; i++) {
      let sum = 0
      for (let ch = 0; ch < block.length; ch++) sum += block[ch][i]
      dst[i] = sum * k
    }
  } else {
    const x = block[p.channels === 'right' && block.length > 1 ? 1 : 0]
    dst.set(x.subarray(0, n))
  }
  return n * out
}

export interface ConvertResult {
  frames: number
  format: TargetFormat
}

/**
 * Streams source frames [start, end) through the channel map and the resampler into a 32-bit
 * float WAV at `outPath` (not fsynced: a scratch file). `shouldStop` is checked between blocks.
 */
export async function convertRange(
  sourcePath: string,
  info: WavInfo,
  start: number,
  end: number,
  p: ExportProfile,
  outPath: string,
  hooks: { shouldStop?: () => boolean; onFrames?: (n: number) => void } = {},
): Promise<ConvertResult> {
  const t = targetFormat(info, p)
  const from = info.format.sampleRate
  const want = convertedFrames(end - start, from, t.sampleRate)
  const writer = await WavWriter.open(
    outPath,
    {
      sampleRate: t.sampleRate,
      channels: t.channels,
      encoding: 'float',
      bitsPerSample: 32,
      channelMask: t.channelMask,
    },
    { durable: false },
  )
  const src =
    t.sampleRate === from
      ? null
      : await libsamplerate.create(t.channels, from, t.sampleRate, { converterType: CONVERTER })
  try {
    const inter = new Float32Array(BLOCK_FRAMES * t.channels)
    let written = 0
    const emit = async (data: Float32Array) => {
      const frames = Math.min(data.length / t.channels, want - written)
      if (frames <= 0) return
      const planar = Array.from({ length: t.channels }, () => new Float32Array(frames))
      for (let ch = 0; ch < t.channels; ch++) for (let i = 0; i < frames; i++) planar[ch][i] = data[i * t.channels + ch]
      await writer.write(planar)
      written += frames
    }
    for await (const block of readFrames(sourcePath, info, {
      startFrame: start,
      endFrame: end,
      blockFrames: BLOCK_FRAMES,
    })) {
      if (hooks.shouldStop?.()) throw new Error('render stopped')
      const n = mapChannels(block, p, t.channels, inter)
      const chunk = inter.subarray(0, n)
      // The wrapper hands back a view of the converter's own buffer: emit copies it before the next call.
      await emit(src ? src.full(chunk) : chunk)
      hooks.onFrames?.(block[0].length)
    }
    if (src) {
      const flush = new Float32Array(Math.ceil(FLUSH_SECONDS * from) * t.channels)
      while (written < want) {
        const before = written
        await emit(src.full(flush))
        if (written === before) break
      }
    }
    if (written !== want) throw new Error(`the converter gave ${written} of ${want} frames`)
    await writer.close()
    return { frames: written, format: t }
  } catch (err) {
    await writer.abort()
    throw err
  } finally {
    src?.destroy()
  }
}
