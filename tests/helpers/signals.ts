// Test signals built from the descriptions in published test documents, and
// helpers to feed them to the meter block by block as a reader would.
import { Meter, type MeterFormat, type MeterResult } from '../../server/audio/meter'
import { TRUE_PEAK_PHASES } from '../../server/audio/true-peak'

export interface ToneSegment {
  seconds: number
  /** Peak amplitude in dBFS (EBU Tech 3341/3342 state sine levels this way). */
  dbfs: number
}

/** A 1 kHz (or given) sine whose level steps through segments, phase-continuous. */
export function steppedSine(sampleRate: number, segments: ToneSegment[], hz = 1000): Float32Array {
  const total = segments.reduce((n, s) => n + Math.round(s.seconds * sampleRate), 0)
  const out = new Float32Array(total)
  let i = 0
  for (const s of segments) {
    const a = 10 ** (s.dbfs / 20)
    const n = Math.round(s.seconds * sampleRate)
    for (let j = 0; j < n; j++, i++) out[i] = a * Math.sin((2 * Math.PI * hz * i) / sampleRate)
  }
  return out
}

/** A sine of amplitude 10^(dbfs/20) with a phase offset in degrees. */
export function sine(sampleRate: number, seconds: number, hz: number, dbfs: number, phaseDeg = 0): Float32Array {
  const n = Math.round(seconds * sampleRate)
  const a = 10 ** (dbfs / 20)
  const phase = (phaseDeg * Math.PI) / 180
  const out = new Float32Array(n)
  for (let i = 0; i < n; i++) out[i] = a * Math.sin((2 * Math.PI * hz * i) / sampleRate + phase)
  return out
}

/** Alternating levels (dBFS) with the given durations, repeated to fill `seconds`. */
export function alternatingSine(sampleRate: number, seconds: number, pattern: ToneSegment[], hz = 1000): Float32Array {
  const segments: ToneSegment[] = []
  let t = 0
  for (let k = 0; t < seconds - 1e-9; k++) {
    const p = pattern[k % pattern.length]
    const d = Math.min(p.seconds, seconds - t)
    segments.push({ seconds: d, dbfs: p.dbfs })
    t += d
  }
  return steppedSine(sampleRate, segments, hz)
}

/** Deterministic pseudo-random generator (mulberry32), so tests are reproducible. */
export function random(seed: number): () => number {
  let a = seed >>> 0
  return () => {
    a = (a + 0x6d2b79f5) >>> 0
    let t = a
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

/** Pushes planar channels through a Meter in blocks of `block` frames. */
export function measure(
  channels: Float32Array[],
  format: Omit<MeterFormat, 'channels' | 'frames'>,
  block = 4096,
): MeterResult {
  const frames = channels[0].length
  const meter = new Meter({ ...format, channels: channels.length, frames })
  for (let i = 0; i < frames; i += block) meter.push(channels.map((c) => c.subarray(i, Math.min(frames, i + block))))
  return meter.finish()
}

/** EBU Tech 3342 §4 test signals 1–4 (stereo 1 kHz sines; descriptions recalled from memory), with the document's expected loudness range. */
export const EBU_3342_CASES: { name: string; segments: ToneSegment[]; expectedLu: number }[] = [
  {
    name: 'case 1: 20 s at −20 dBFS then 20 s at −30 dBFS → 10 LU',
    segments: [
      { seconds: 20, dbfs: -20 },
      { seconds: 20, dbfs: -30 },
    ],
    expectedLu: 10,
  },
  {
    name: 'case 2: 20 s at −20 dBFS then 20 s at −15 dBFS → 5 LU',
    segments: [
      { seconds: 20, dbfs: -20 },
      { seconds: 20, dbfs: -15 },
    ],
    expectedLu: 5,
  },
  {
    name: 'case 3: 20 s at −40 dBFS then 20 s at −20 dBFS → 20 LU',
    segments: [
      { seconds: 20, dbfs: -40 },
      { seconds: 20, dbfs: -20 },
    ],
    expectedLu: 20,
  },
  {
    name: 'case 4: 20 s each at −50, −35, −20, −35, −50 dBFS → 15 LU (−50 dBFS gated out by the −20 LU relative gate)',
    segments: [
      { seconds: 20, dbfs: -50 },
      { seconds: 20, dbfs: -35 },
      { seconds: 20, dbfs: -20 },
      { seconds: 20, dbfs: -35 },
      { seconds: 20, dbfs: -50 },
    ],
    expectedLu: 15,
  },
]

export function loudnessRange(sampleRate: number, segments: ToneSegment[]): number | null {
  const s = steppedSine(sampleRate, segments)
  return measure([s, s], { sampleRate, channelMask: 0 }).loudness.loudnessRangeLu
}

/**
 * Reference true peak (linear) by brute force, ITU-R BS.1770-4 Annex 2: the largest sample and the
 * largest output of the four phases of the table at every position whose 12 taps lie on samples.
 */
export function truePeakBruteForce(x: Float32Array): number {
  let peak = 0
  for (const v of x) peak = Math.max(peak, Math.abs(v))
  for (let i = 11; i < x.length; i++) {
    for (const h of TRUE_PEAK_PHASES) {
      let y = 0
      for (let k = 0; k < 12; k++) y += h[k] * x[i - k]
      peak = Math.max(peak, Math.abs(y))
    }
  }
  return peak
}
