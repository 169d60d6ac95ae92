// Renders one pack item (a take, or a range of one) to a WAV file to spec, in
// a streaming way: memory is a few blocks, whatever the item's length.
//
//   1. Range in frames; loops move both ends to rising zero crossings (zero-crossing.ts).
//   2. Levels of the source range: given (the take's analysis for a whole take, or a
//      cached range measurement), else a first measuring pass with the engine's Meter.
//   3. Gain from the settings (settings.ts): loudness or peak normalisation or none,
//      always under the true-peak ceiling; no limiter.
//   4. One streaming pass: read a block, apply gain and fades, reduce the word length
//      with TPDF dither (quantize.ts), meter the exact output samples (loudness, range,
//      true peak), write the block.
//   (Under an export profile that changes the rate or the channels, steps 2–5 run on the
//   range after channel mapping and resampling (convert.ts), so the delivered file meets
//   its loudness and ceiling; the loop and the fades are then laid out at the new rate.)
//   5. Fades and quantisation move a short item's loudness slightly. When the measured
//      result misses the target by more than 0.1 LU (or 0.1 dB in peak mode), or its true
//      peak is above the ceiling, the pass is thrown away and run once more with the
//      gain corrected by the miss (still capped by the ceiling). Otherwise bext's loudness
//      fields get the measured values and the file is closed into place.
import { randomBytes } from 'node:crypto'
import { rm } from 'node:fs/promises'
import type { ItemKind, RenderSettings } from '@shared/schemas/packs'
import { probeWav, readFrames, type WavInfo } from '../audio/wav-reader'
import { WavWriter, type WavWriteOptions } from '../audio/wav-writer'
import { LevelMeter, measureRange, type LevelReading } from './level-meter'
import { convertRange, conversionText, needsConversion } from './convert'
import { bextFor, codingHistory, infoFor, type CodingLine, type ItemMetadata } from './metadata'
import { ditherState, processBlock } from './quantize'
import { ceilingPeak, modeTarget, planGain, round2, targetLoudness, type GainPlan, type SourceLevels } from './settings'
import { loopCut } from './zero-crossing'

export const RENDER_BLOCK_FRAMES = 65536
/** A miss larger than this (LU, or dB in peak mode) triggers the one corrective pass. */
export const TARGET_TOLERANCE = 0.1

export class RenderStopped extends Error {
  constructor() {
    super('render stopped')
  }
}

export interface RenderRequest {
  sourcePath: string
  /** null: from the start of the take. */
  startSeconds: number | null
  /** null: to the end of the take. */
  endSeconds: number | null
  kind: ItemKind
  settings: RenderSettings
  /** Levels of exactly the asked range, when already known; measured otherwise. */
  sourceLevels?: SourceLevels | null
  metadata: ItemMetadata
  /** Seed of the dither generator; the same request renders the same bytes. */
  ditherSeed?: number
  /** Frames rendered so far in this request (over all passes). */
  onFrames?: (frames: number) => void
  /** Checked between blocks; true aborts with RenderStopped and leaves no file. */
  shouldStop?: () => boolean
  /** A probe of sourcePath the caller already made. */
  sourceInfo?: WavInfo
  /** Set on the second stage of a converted render: the take's format and what the conversion did (coding history). */
  origin?: { source: CodingLine; conversion: CodingLine }
  /** Set on the second stage of a converted loop: the range is already the loop, cut on crossings at the source rate. */
  loopReady?: { onCrossings: boolean }
}

/** An item longer than its profile allows: refused before any sample is written. */
export class TooLongForProfile extends Error {
  constructor(
    readonly seconds: number,
    readonly maxSeconds: number,
  ) {
    super(`it lasts ${seconds.toFixed(2)} s, longer than the export profile's limit of ${maxSeconds} s`)
    this.name = 'TooLongForProfile'
  }
}

/** A request without its callbacks: what crosses to a worker thread or the build process. */
export type PlainRenderRequest = Omit<RenderRequest, 'onFrames' | 'shouldStop' | 'sourceInfo'>

export interface RenderResult {
  path: string
  bytes: number
  frames: number
  durationSeconds: number
  sampleRate: number
  channels: number
  bitDepth: number
  encoding: 'pcm' | 'float'
  /** The source frames rendered, [start, end). */
  sourceStartFrame: number
  sourceEndFrame: number
  sourceLevels: SourceLevels
  gainDb: number
  mode: RenderSettings['normalize']
  /** The ceiling kept the item below its target. */
  limited: boolean
  /** null when the item reached its target; else how far short (LU in loudness mode, dB in peak mode). */
  underTargetDb: number | null
  /** Measured on the samples written. */
  levels: LevelReading
  /** smpl loop of the file (start and end inclusive), loops only. */
  loop: { start: number; end: number; onCrossings: boolean } | null
  dithered: boolean
  fadeInFrames: number
  fadeOutFrames: number
  /** 1, or 2 when the corrective pass ran. */
  passes: number
}

function clampFrame(seconds: number | null, rate: number, frames: number, dflt: number): number {
  if (seconds === null) return dflt
  return Math.min(frames, Math.max(0, Math.round(seconds * rate)))
}

/** Fade lengths in frames; when both do not fit, each gets at most half the item. */
export function fadeFrames(
  kind: ItemKind,
  s: RenderSettings,
  rate: number,
  total: number,
): { fadeIn: number; fadeOut: number } {
  if (kind === 'loop') return { fadeIn: 0, fadeOut: 0 }
  let fadeIn = Math.round((s.fadeInMs / 1000) * rate)
  let fadeOut = Math.round((s.fadeOutMs / 1000) * rate)
  if (fadeIn + fadeOut > total) {
    fadeIn = Math.min(fadeIn, Math.floor(total / 2))
    fadeOut = Math.min(fadeOut, total - fadeIn)
  }
  return { fadeIn, fadeOut }
}

/** Whether a sample can leave the output grid: PCM output of a float or deeper source, or any change of level. */
function needsDither(info: WavInfo, s: RenderSettings, gain: number, fades: boolean): boolean {
  if (s.bitDepth === 32) return false
  const f = info.format
  return f.encoding === 'float' || f.validBitsPerSample > s.bitDepth || gain !== 1 || fades
}

function seedOf(r: RenderRequest): number {
  return r.ditherSeed ?? randomBytes(4).readUInt32LE(0)
}

export interface RenderItemOptions {
  /** fsync the file before it takes its name (default true); false for a temp render that is zipped and deleted. */
  durable?: boolean
}

export async function renderItem(
  req: RenderRequest,
  outPath: string,
  options: RenderItemOptions = {},
): Promise<RenderResult> {
  const durable = options.durable ?? true
  // A profile decides the output word length.
  if (req.settings.profile && req.settings.bitDepth !== req.settings.profile.bitDepth)
    req = { ...req, settings: { ...req.settings, bitDepth: req.settings.profile.bitDepth } }
  const info = req.sourceInfo ?? (await probeWav(req.sourcePath))
  const f = info.format
  const s = req.settings
  let start = clampFrame(req.startSeconds, f.sampleRate, f.frames, 0)
  let end = clampFrame(req.endSeconds, f.sampleRate, f.frames, f.frames)
  if (end <= start) throw new RangeError(`the range ${start}..${end} holds no frames`)
  let loop: RenderResult['loop'] = null
  const maxSeconds = s.profile?.maxSeconds ?? null
  if (maxSeconds !== null && (end - start) / f.sampleRate > maxSeconds + 1e-9)
    throw new TooLongForProfile((end - start) / f.sampleRate, maxSeconds)
  if (req.kind === 'loop' && req.loopReady) {
    loop = { start: 0, end: end - start - 1, onCrossings: req.loopReady.onCrossings }
  } else if (req.kind === 'loop') {
    const cut = await loopCut(req.sourcePath, info, start, end)
    start = cut.start
    end = cut.end
    loop = { start: 0, end: end - start - 1, onCrossings: cut.onCrossings }
  }
  if (needsConversion(info, s.profile)) return renderConverted(req, info, start, end, loop, outPath, options)
  const total = end - start
  let source: SourceLevels = req.sourceLevels ?? (await measureRange(req.sourcePath, info, start, end))
  // A one-shot under 400 ms has no integrated loudness; loudness mode meets its target on the
  // short-sound loudness, measured here when the given levels do not carry it.
  if (s.normalize === 'loudness' && targetLoudness(source) === null && total < 0.4 * f.sampleRate && req.sourceLevels) {
    source = await measureRange(req.sourcePath, info, start, end)
  }
  const { fadeIn, fadeOut } = fadeFrames(req.kind, s, f.sampleRate, total)
  const seed = seedOf(req)
  let plan: GainPlan = planGain(source, s)
  let done = 0
  const progress = (n: number) => {
    done += n
    req.onFrames?.(done)
  }

  const first = await renderPass(
    req,
    info,
    outPath,
    start,
    end,
    plan.gainDb,
    fadeIn,
    fadeOut,
    loop,
    seed,
    progress,
    durable,
  )
  let pass = first
  let passes = 1
  const correction = correctionDb(plan, s, first.levels)
  if (correction !== null) {
    await first.writer.abort()
    plan = { ...plan, gainDb: plan.gainDb + correction.db, limited: plan.limited || correction.capped }
    pass = await renderPass(req, info, outPath, start, end, plan.gainDb, fadeIn, fadeOut, loop, seed, progress, durable)
    passes = 2
  }
  const history = pass.history
  pass.writer.updateBext(bextFor(req.metadata, history, pass.levels))
  const closed = await pass.writer.close()

  const target = modeTarget(plan.mode, s)
  const reached =
    plan.mode === 'loudness' ? targetLoudness(pass.levels) : plan.mode === 'peak' ? pass.levels.truePeakDbtp : null
  const under =
    plan.limited && target !== null && reached !== null && target - reached > 0.005 ? round2(target - reached) : null
  return {
    path: outPath,
    bytes: closed.bytes,
    frames: closed.frames,
    durationSeconds: closed.frames / f.sampleRate,
    sampleRate: f.sampleRate,
    channels: f.channels,
    bitDepth: s.bitDepth,
    encoding: s.bitDepth === 32 ? 'float' : 'pcm',
    sourceStartFrame: start,
    sourceEndFrame: end,
    sourceLevels: source,
    gainDb: plan.gainDb,
    mode: plan.mode,
    limited: plan.limited,
    underTargetDb: under,
    levels: pass.levels,
    loop,
    dithered: pass.dithered,
    fadeInFrames: fadeIn,
    fadeOutFrames: fadeOut,
    passes,
  }
}

/**
 * Channel mapping and resampling first, into a float scratch file beside the output; then the
 * usual render of that file, whose levels are measured afresh (the given source levels are of
 * the take's own channels and rate). The loop, already cut on the source's crossings, becomes
 * the whole converted range; fades are laid out in milliseconds, so at the new rate.
 */
async function renderConverted(
  req: RenderRequest,
  info: WavInfo,
  start: number,
  end: number,
  loop: RenderResult['loop'],
  outPath: string,
  options: RenderItemOptions,
): Promise<RenderResult> {
  const profile = req.settings.profile!
  const f = info.format
  const scratch = `${outPath}.convert-${randomBytes(4).toString('hex')}.wav`
  let converted
  let done = 0
  try {
    converted = await convertRange(req.sourcePath, info, start, end, profile, scratch, {
      shouldStop: req.shouldStop,
      onFrames: (n) => req.onFrames?.((done += n)),
    })
  } catch (err) {
    await rm(scratch, { force: true })
    throw (err as Error)?.message === 'render stopped' ? new RenderStopped() : err
  }
  const t = converted.format
  try {
    const result = await renderItem(
      {
        ...req,
        sourcePath: scratch,
        sourceInfo: undefined,
        startSeconds: null,
        endSeconds: null,
        sourceLevels: null,
        settings: { ...req.settings, profile: null },
        metadata: {
          ...req.metadata,
          // Samples since midnight count at the file's own rate.
          timeReference: Math.round((req.metadata.timeReference * t.sampleRate) / f.sampleRate),
        },
        origin: {
          source: {
            encoding: f.encoding,
            sampleRate: f.sampleRate,
            bits: f.validBitsPerSample,
            channels: f.channels,
            text: 'source take',
          },
          conversion: {
            encoding: 'float',
            sampleRate: t.sampleRate,
            bits: 32,
            channels: t.channels,
            text: conversionText(info, profile),
          },
        },
        loopReady: loop ? { onCrossings: loop.onCrossings } : undefined,
        onFrames: (n) => req.onFrames?.(done + n),
      },
      outPath,
      options,
    )
    return { ...result, sourceStartFrame: start, sourceEndFrame: end }
  } finally {
    await rm(scratch, { force: true })
  }
}

/** The gain change of the corrective pass, or null when the first pass is good. */
export function correctionDb(
  plan: GainPlan,
  s: RenderSettings,
  got: LevelReading,
): { db: number; capped: boolean } | null {
  const tp = got.truePeakDbtp
  const peak = ceilingPeak(got)
  if (tp === null || peak === null) return null
  // The ceiling is held to the high-accuracy true peak of the samples written.
  const room = s.truePeakCeilingDbtp - peak
  const target = modeTarget(plan.mode, s)
  const reached = plan.mode === 'loudness' ? targetLoudness(got) : plan.mode === 'peak' ? tp : null
  let want = 0
  if (!plan.limited && target !== null && reached !== null && Math.abs(target - reached) > TARGET_TOLERANCE)
    want = target - reached
  else if (plan.limited && room > TARGET_TOLERANCE) want = room // the fades took the peak away: there is headroom left
  const over = room < -0.005
  if (want === 0 && !over) return null
  const capped = want > room
  return { db: Math.min(want, room), capped }
}

interface Pass {
  writer: WavWriter
  levels: LevelReading
  dithered: boolean
  history: string
}

async function renderPass(
  req: RenderRequest,
  info: WavInfo,
  outPath: string,
  start: number,
  end: number,
  gainDb: number,
  fadeIn: number,
  fadeOut: number,
  loop: RenderResult['loop'],
  seed: number,
  progress: (n: number) => void,
  durable: boolean,
): Promise<Pass> {
  const f = info.format
  const s = req.settings
  const total = end - start
  const gain = 10 ** (gainDb / 20)
  const dithered = needsDither(info, s, gain, fadeIn + fadeOut > 0)
  const float = s.bitDepth === 32
  const history = codingHistory([
    ...(req.origin
      ? [req.origin.source, req.origin.conversion]
      : [
          {
            encoding: f.encoding,
            sampleRate: f.sampleRate,
            bits: f.validBitsPerSample,
            channels: f.channels,
            text: 'source take',
          },
        ]),
    {
      encoding: float ? 'float' : 'pcm',
      sampleRate: f.sampleRate,
      bits: s.bitDepth,
      channels: f.channels,
      text:
        `${req.metadata.originatorReference ? req.metadata.originatorReference + ' ' : ''}render, gain ${gainDb >= 0 ? '+' : ''}${gainDb.toFixed(2)} dB, ` +
        `${req.kind === 'loop' ? 'loop on zero crossings' : `fades ${fadeIn}/${fadeOut} frames`}${dithered ? ', TPDF dither' : ''}`,
    },
  ])
  const opts: WavWriteOptions = {
    sampleRate: f.sampleRate,
    channels: f.channels,
    encoding: float ? 'float' : 'pcm',
    bitsPerSample: s.bitDepth,
    channelMask: f.channelMask,
    bext: bextFor(req.metadata, history, null),
    info: infoFor(req.metadata),
    loops: loop ? [{ start: loop.start, end: loop.end }] : undefined,
  }
  const writer = await WavWriter.open(outPath, opts, { durable })
  try {
    const meter = new LevelMeter(f.sampleRate, f.channels, f.channelMask)
    const env = { gain, total, fadeIn, fadeOut }
    const q = {
      scale: float ? 0 : 2 ** (s.bitDepth - 1),
      dither: dithered,
      plainFirst: loop !== null,
      plainLast: loop !== null,
    }
    const rng = ditherState(seed)
    let pos = 0
    // One block's write stays in flight while the next is read, processed and metered. Blocks come
    // from a ring of three sets of arrays: when block k is decoded into a set, the write of block
    // k − 3 that used it has long been awaited (the loop awaits write k − 2 before queueing k − 1).
    // PCM output also leaves the quantiser as integers (a ring of three likewise), which the
    // writer packs as they are; float output is written from the block.
    const ring = float
      ? null
      : Array.from({ length: 3 }, () => Array.from({ length: f.channels }, () => new Int32Array(RENDER_BLOCK_FRAMES)))
    let turn = 0
    let writing: Promise<void> | null = null
    for await (const block of readFrames(req.sourcePath, info, {
      startFrame: start,
      endFrame: end,
      blockFrames: RENDER_BLOCK_FRAMES,
      recycle: 3,
    })) {
      if (req.shouldStop?.()) throw new RenderStopped()
      const ints = ring ? ring[turn++ % 3] : undefined
      processBlock(block, pos, env, q, rng, ints)
      meter.push(block)
      if (writing) await writing
      writing = ints ? writer.writeInts(ints, block[0].length) : writer.write(block)
      writing.catch(() => undefined) // awaited before the next write or after the loop
      pos += block[0].length
      progress(block[0].length)
    }
    if (writing) await writing
    if (pos !== total) throw new Error(`the source ended after ${pos} of ${total} frames`)
    return { writer, levels: meter.finish(), dithered, history }
  } catch (err) {
    await writer.abort()
    throw err
  }
}
