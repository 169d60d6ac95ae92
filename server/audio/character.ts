// Character descriptors of a take (hum, whine, bursts, crackle, hiss, motor,
// data chirp), their tag confidences, and the sounds-like feature vector.
//
// Cost stays small beside the rest of the analysis: at most 8 excerpts of 4 s
// (evenly spread; the whole take when it is shorter than 32 s) are kept as a
// mono mix and measured when each is complete, and mains hum is read from the
// spectrum the analysis has already averaged (spectrum.mainsHum).
import type { Spectrum } from '@shared/schemas/analysis'
import type { Character, CharacterTag, TagConfidence } from '@shared/schemas/character'
import { ExcerptAnalyser, MEL_BANDS, type ExcerptMeasures, type LongFrame } from './character-frames'
import { meanOfChannels } from './mix-down'

const EXCERPT_SECONDS = 4
const MAX_EXCERPTS = 8

/** What the sounds-like index keeps of a take: the whole-take vector and the frames regions are built from. */
export interface TakeFeatures {
  vector: Float32Array
  /** Start times (s) of the long frames and their mel bands (MEL_BANDS per frame). */
  frameTimes: Float32Array
  frameMel: Float32Array
}

/** TakeFeatures as plain arrays, for results that travel as JSON. */
export interface FeaturesJson {
  vector: number[]
  frameTimes: number[]
  frameMel: number[]
}
export const featuresToJson = (f: TakeFeatures): FeaturesJson => ({
  vector: Array.from(f.vector),
  frameTimes: Array.from(f.frameTimes),
  frameMel: Array.from(f.frameMel),
})
export const featuresFromJson = (f: FeaturesJson): TakeFeatures => ({
  vector: Float32Array.from(f.vector),
  frameTimes: Float32Array.from(f.frameTimes),
  frameMel: Float32Array.from(f.frameMel),
})

export interface CharacterResult {
  character: Character
  features: TakeFeatures
}

interface Excerpt {
  start: number
  buffer: Float32Array
  filled: number
}

function excerptStarts(frames: number, length: number): number[] {
  if (frames <= length * MAX_EXCERPTS) {
    const out: number[] = []
    for (let s = 0; s < frames; s += length) out.push(s)
    return out
  }
  return Array.from({ length: MAX_EXCERPTS }, (_, i) => Math.round((i * (frames - length)) / (MAX_EXCERPTS - 1)))
}

export class CharacterMeter {
  private readonly analyser: ExcerptAnalyser
  private readonly excerpts: Excerpt[]
  private readonly measured: ExcerptMeasures[] = []
  private position = 0

  constructor(sampleRate: number, frames: number) {
    this.analyser = new ExcerptAnalyser(sampleRate)
    const length = Math.round(EXCERPT_SECONDS * sampleRate)
    this.excerpts = excerptStarts(frames, length).map((start) => ({
      start,
      buffer: new Float32Array(Math.min(length, Math.max(0, frames - start))),
      filled: 0,
    }))
  }

  /** Planar blocks in order; only samples inside an excerpt are kept. */
  push(planar: Float32Array[]): void {
    const n = planar[0]?.length ?? 0
    for (const ex of this.excerpts) {
      if (ex.filled >= ex.buffer.length) continue
      const from = Math.max(0, ex.start + ex.filled - this.position)
      const to = Math.min(n, ex.start + ex.buffer.length - this.position)
      if (to <= from) continue
      const b = ex.buffer
      meanOfChannels(b, ex.filled, planar, from, to)
      ex.filled += to - from
      if (ex.filled >= b.length) this.measureExcerpt(ex)
    }
    this.position += n
  }

  private measureExcerpt(ex: Excerpt): void {
    const sr = this.analyser.sampleRate
    if (ex.filled > 0.25 * sr)
      this.measured.push(this.analyser.measure(ex.buffer.subarray(0, ex.filled), ex.start / sr))
    ex.buffer = new Float32Array(0)
    ex.filled = 0
  }

  finish(spectrum: Spectrum): CharacterResult {
    for (const ex of this.excerpts) if (ex.filled > 0) this.measureExcerpt(ex) // a take shorter than announced
    return describe(this.measured, spectrum)
  }
}

const clamp01 = (x: number) => (x < 0 ? 0 : x > 1 ? 1 : Number.isFinite(x) ? x : 0)
const ramp = (x: number, a: number, b: number) => clamp01((x - a) / (b - a))
const round3 = (x: number) => Math.round(x * 1000) / 1000

function quantile(values: ArrayLike<number>, q: number): number {
  if (values.length === 0) return 0
  const s = Float64Array.from(values).sort()
  return s[Math.min(s.length - 1, Math.max(0, Math.round((s.length - 1) * q)))]
}

/** Peak of the normalised autocorrelation of the level after its first dip, 40 ms – 1.5 s. */
function periodicity(e: Float32Array, hopSeconds: number): { r: number; lag: number } {
  const n = e.length
  const minLag = Math.round(0.04 / hopSeconds)
  const maxLag = Math.min(Math.round(1.5 / hopSeconds), Math.floor(n / 2))
  if (maxLag <= minLag) return { r: 0, lag: 0 }
  let mean = 0
  for (let i = 0; i < n; i++) mean += e[i]
  mean /= n
  const d = new Float64Array(n)
  let energy = 0
  for (let i = 0; i < n; i++) {
    d[i] = e[i] - mean
    energy += d[i] * d[i]
  }
  if (!(energy > 0)) return { r: 0, lag: 0 }
  const r = new Float64Array(maxLag + 1)
  for (let lag = 1; lag <= maxLag; lag++) {
    let s = 0
    for (let i = 0; i + lag < n; i++) s += d[i] * d[i + lag]
    r[lag] = (s / energy) * (n / (n - lag))
  }
  let lag = 1
  while (lag < maxLag && r[lag + 1] < r[lag]) lag++ // past the first dip
  let best = 0
  for (let l = Math.max(lag, minLag); l <= maxLag; l++) best = Math.max(best, r[l])
  // The period is the first lag near the best: its multiples correlate as well.
  let at = 0
  for (let l = Math.max(lag, minLag); l <= maxLag && at === 0; l++)
    if (r[l] >= 0.9 * best && (l === maxLag || r[l] >= r[l + 1])) at = l
  return { r: best, lag: at }
}

/** Flatness (geometric over arithmetic mean) of power over 100 Hz – 16 kHz, times `tilt(k)`. */
function flatness(p: Float64Array, binHz: number, tilt: (k: number) => number): number {
  const from = Math.max(1, Math.round(100 / binHz))
  const to = Math.min(p.length - 1, Math.round(Math.min(16000, binHz * (p.length - 1) * 0.9) / binHz))
  let logSum = 0
  let sum = 0
  let count = 0
  for (let k = from; k <= to; k++) {
    const v = p[k] * tilt(k) + 1e-30
    logSum += Math.log(v)
    sum += v
    count++
  }
  return count > 0 && sum > 0 ? Math.exp(logSum / count) / (sum / count) : 0
}

/** Share of the long frames' mean power in the lobes (±1 bin) of harmonics 1–8 of `hz`. */
function harmonicPowerShare(ms: ExcerptMeasures[], hz: number): number {
  let inLobes = 0
  let total = 0
  for (const m of ms) {
    const p = m.meanPower
    for (let k = 1; k < p.length; k++) total += p[k] * m.seconds
    for (let h = 1; h <= 8; h++) {
      const k = Math.round((h * hz) / m.binHz)
      for (let j = k - 1; j <= k + 1 && j < p.length; j++) inLobes += p[j] * m.seconds
    }
  }
  return total > 0 ? inLobes / total : 0
}

function describe(ms: ExcerptMeasures[], spectrum: Spectrum): CharacterResult {
  const frames: LongFrame[] = ms.flatMap((m) => m.frames)
  const maxPower = frames.reduce((a, f) => Math.max(a, f.power), 0)
  // Frames within 40 dB of the loudest count as "active" (quiet gaps between bursts do not).
  const active = frames.filter((f) => f.power > maxPower * 1e-4 && f.power > 0)

  // Steady tone.
  const tonal = active.filter((f) => f.toneShare >= 0.3)
  const tonePresence = active.length ? tonal.length / active.length : 0
  const whineHz = tonal.length
    ? quantile(
        tonal.map((f) => f.toneHz),
        0.5,
      )
    : null
  const whineStability =
    whineHz && tonal.length ? tonal.filter((f) => Math.abs(f.toneHz / whineHz - 1) <= 0.01).length / tonal.length : 0

  // Harmonic series and its glide.
  const harmonic = active.filter((f) => f.harmonicShare >= 0.6)
  const harmonicPresence = active.length ? harmonic.length / active.length : 0
  const f0s = harmonic.map((f) => f.f0Hz)
  const motorHz = f0s.length ? quantile(f0s, 0.5) : null
  const glideOctaves = f0s.length >= 3 ? Math.log2(quantile(f0s, 0.9) / quantile(f0s, 0.1)) : 0

  // Level: depth and periodicity.
  const levels = ms.flatMap((m) => Array.from(m.envelope))
  const peakLevel = levels.reduce((a, v) => Math.max(a, v), 0)
  const db = levels.map((v) => 20 * Math.log10(Math.max(v, peakLevel * 1e-5, 1e-10)))
  const envelopeDepthDb = levels.length ? quantile(db, 0.95) - quantile(db, 0.1) : 0
  let rSum = 0
  let lagSum = 0
  let weight = 0
  for (const m of ms) {
    const p = periodicity(m.envelope, 0.005)
    rSum += p.r * m.envelope.length
    lagSum += p.lag * m.envelope.length
    weight += m.envelope.length
  }
  const burstPeriodicity = weight ? rSum / weight : 0
  const lag = weight ? lagSum / weight : 0
  const burstRateHz = lag > 0 ? 1 / (lag * 0.005) : null

  // Clicks.
  const seconds = ms.reduce((a, m) => a + m.seconds, 0)
  const clicks = ms.reduce((a, m) => a + m.clicks, 0)
  const clickSamples = ms.reduce((a, m) => a + m.clickSamples, 0)
  const clicksPerSecond = seconds > 0 ? clicks / seconds : 0
  const sr = ms[0] ? ms[0].binHz * (ms[0].meanPower.length - 1) * 2 : 48000
  const clickMs = clicks > 0 ? (clickSamples / clicks / sr) * 1000 : null

  // Flatness of the averaged spectrum (white, or pink once tilted by f).
  let flat = 0
  for (const m of ms) {
    const white = flatness(m.meanPower, m.binHz, () => 1)
    const pink = flatness(m.meanPower, m.binHz, (k) => k)
    flat += Math.max(white, pink) * m.seconds
  }
  const flatnessValue = seconds > 0 ? flat / seconds : 0

  // Data chirps: tonal short frames whose frequency strays from the excerpt's usual one (a steady
  // tone, bursts of one tone and a whine do not; frequency-shift keying and sweeps do).
  let tonalShort = 0
  let strays = 0
  let shortCount = 0
  for (const m of ms) {
    const maxP = m.shortPower.reduce((a, v) => Math.max(a, v), 0)
    const hz: number[] = []
    for (let i = 0; i < m.shortHz.length; i++)
      if (m.shortPower[i] > maxP * 1e-3 && m.shortShare[i] >= 0.5) hz.push(m.shortHz[i])
    shortCount += m.shortHz.length
    tonalShort += hz.length
    const mid = quantile(hz, 0.5)
    for (const f of hz) if (Math.abs(Math.log2(f / mid)) > 0.1 && Math.abs(f - mid) > 1.5 * m.shortBinHz) strays++
  }
  const chirpJumpShare = tonalShort > 0 ? strays / tonalShort : 0
  const tonalShortShare = shortCount > 0 ? tonalShort / shortCount : 0

  const hum = spectrum.mainsHum
  const humStrength = hum.hz !== null ? clamp01(hum.confidence ?? 0.5) : 0
  const humShare = hum.hz !== null ? harmonicPowerShare(ms, hum.measuredHz ?? hum.hz) : 0

  const chirp =
    ramp(chirpJumpShare, 0.15, 0.3) * ramp(tonalShortShare, 0.02, 0.06) * (1 - ramp(harmonicPresence, 0.4, 0.7))
  const crackle =
    ramp(clicksPerSecond, 1, 3) *
    (1 - ramp(clickMs ?? 0, 0.8, 1)) *
    (1 - ramp(burstPeriodicity, 0.6, 0.8)) *
    (1 - ramp(tonePresence, 0.5, 0.8)) *
    (1 - ramp(harmonicPresence, 0.4, 0.7)) *
    (1 - chirp)
  const burst = ramp(envelopeDepthDb, 10, 18) * ramp(burstPeriodicity, 0.35, 0.6) * (1 - chirp) * (1 - crackle)
  const steady = 1 - ramp(envelopeDepthDb, 10, 16)
  const whine = ramp(tonePresence, 0.5, 0.8) * ramp(whineStability, 0.6, 0.85) * steady * (1 - chirp)
  const motor = ramp(harmonicPresence, 0.4, 0.7) * ramp(glideOctaves, 0.03, 0.07) * steady * (1 - chirp) * (1 - whine)
  // Hum as a character, not a trace under something else: its harmonics hold a tenth of the power or more.
  const humTag = hum.hz !== null ? Math.max(0.55, humStrength) * ramp(humShare, 0.03, 0.1) * (1 - motor) : 0
  const hiss =
    ramp(flatnessValue, 0.3, 0.5) *
    (1 - ramp(envelopeDepthDb, 8, 14)) *
    (1 - crackle) *
    (1 - ramp(tonePresence, 0.2, 0.5)) *
    (1 - ramp(harmonicPresence, 0.3, 0.6))

  const scores: Record<CharacterTag, number> = {
    hum: humTag,
    whine,
    'burst train': burst,
    crackle,
    hiss,
    motor,
    'data chirp': chirp,
  }
  const tags: TagConfidence[] = (Object.keys(scores) as CharacterTag[])
    .map((tag) => ({ tag, confidence: round3(clamp01(scores[tag])) }))
    .sort((a, b) => b.confidence - a.confidence)

  const character: Character = {
    humStrength: round3(humStrength),
    whineHz: whineHz === null ? null : Math.round(whineHz * 10) / 10,
    whineStability: round3(whineStability),
    tonePresence: round3(tonePresence),
    burstPeriodicity: round3(burstPeriodicity),
    burstRateHz: burstRateHz === null ? null : Math.round(burstRateHz * 100) / 100,
    envelopeDepthDb: Math.round(envelopeDepthDb * 10) / 10,
    clicksPerSecond: Math.round(clicksPerSecond * 10) / 10,
    clickMs: clickMs === null ? null : Math.round(clickMs * 100) / 100,
    flatness: round3(flatnessValue),
    harmonicPresence: round3(harmonicPresence),
    motorHz: motorHz === null ? null : Math.round(motorHz * 10) / 10,
    glideOctaves: round3(glideOctaves),
    chirpJumpShare: round3(chirpJumpShare),
    tags,
  }
  return { character, features: features(frames, character, scores) }
}

/**
 * The sounds-like vector: per mel band the level of the mean power (the take's own mean level
 * taken off, so a quiet and a loud take of one sound match), the spread of its dB level, and its
 * frame-to-frame change (the modulation); then the tag scores and a few descriptors, scaled to
 * about the same range.
 */
export function melVector(mel: Float32Array, frameCount: number, descriptors: number[]): Float32Array {
  const B = MEL_BANDS
  const power = new Float64Array(B)
  const mean = new Float64Array(B)
  const sq = new Float64Array(B)
  const delta = new Float64Array(B)
  for (let f = 0; f < frameCount; f++)
    for (let b = 0; b < B; b++) {
      const v = mel[f * B + b]
      power[b] += 10 ** (v / 10)
      mean[b] += v
      sq[b] += v * v
      if (f > 0) delta[b] += Math.abs(v - mel[(f - 1) * B + b])
    }
  const out = new Float32Array(3 * B + descriptors.length)
  if (frameCount > 0) {
    // The band levels of the mean power (what the loud parts hold), the take's own mean level taken off.
    const level = Array.from(power, (p) => 10 * Math.log10(p / frameCount + 1e-20))
    const overall = level.reduce((a, v) => a + v, 0) / B
    for (let b = 0; b < B; b++) {
      mean[b] /= frameCount
      out[b] = Math.max(-1, (level[b] - overall) / 40)
      out[B + b] = Math.min(1, Math.sqrt(Math.max(0, sq[b] / frameCount - mean[b] * mean[b])) / 40)
      out[2 * B + b] = frameCount > 1 ? Math.min(1, delta[b] / (frameCount - 1) / 40) : 0
    }
  }
  out.set(descriptors, 3 * B)
  return out
}

/** The tags weigh most in the vector: a sound's kind matters more than its exact spectrum. */
const TAG_WEIGHT = 4

export function descriptorPart(c: Character, scores: Record<CharacterTag, number>): number[] {
  return [
    ...Object.values(scores).map((s) => TAG_WEIGHT * clamp01(s)),
    2 * c.flatness,
    2 * c.tonePresence,
    c.harmonicPresence,
    Math.min(1, c.envelopeDepthDb / 40),
    c.whineHz ? Math.log2(c.whineHz / 400) / 6 : 0,
    c.motorHz ? Math.log2(c.motorHz / 20) / 4 : 0,
  ]
}

function features(frames: LongFrame[], c: Character, scores: Record<CharacterTag, number>): TakeFeatures {
  const frameMel = new Float32Array(frames.length * MEL_BANDS)
  frames.forEach((f, i) => frameMel.set(f.mel, i * MEL_BANDS))
  const frameTimes = Float32Array.from(frames.map((f) => f.at))
  return { vector: melVector(frameMel, frames.length, descriptorPart(c, scores)), frameTimes, frameMel }
}
