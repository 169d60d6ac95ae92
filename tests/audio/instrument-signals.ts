// Test signals of the instrument tools, built from their definitions here (not
// by the code under test): burst trains and clicks at known sample positions
// over a coil's background, and mains hum with harmonics and noise.
import { prng } from '../../server/audio/synth'

const amp = (dbfs: number) => 10 ** (dbfs / 20)
const TAU = 2 * Math.PI

/** Background heard between events: 50 Hz hum (−40 dBFS peak, a third harmonic) and white noise (−60 dBFS RMS). */
function background(n: number, sampleRate: number, seed: number): Float32Array {
  const r = prng(seed)
  const x = new Float32Array(n)
  const noise = amp(-60) * Math.sqrt(3) // uniform in ±a has RMS a/√3
  for (let i = 0; i < n; i++) {
    const t = i / sampleRate
    x[i] = amp(-40) * (0.8 * Math.sin(TAU * 50 * t) + 0.2 * Math.sin(TAU * 150 * t)) + noise * (2 * r() - 1)
  }
  return x
}

export interface KnownEvents {
  sampleRate: number
  samples: Float32Array
  /** The first sample of each event, in seconds. */
  onsets: number[]
}

type Event = (x: Float32Array, at: number, sampleRate: number, r: () => number) => void

/** Noise burst with an exponential decay (τ 40 ms, 150 ms long). */
const noiseBurst: Event = (x, at, sr, r) => {
  const a = amp(-8 - 6 * r())
  for (let i = 0; i < 0.15 * sr && at + i < x.length; i++) x[at + i] += a * (2 * r() - 1) * Math.exp(-i / (0.04 * sr))
}
/** 3 kHz tone gated for 60 ms (1 ms linear attack and release). */
const toneBurst: Event = (x, at, sr) => {
  const n = Math.round(0.06 * sr)
  const ramp = Math.round(0.001 * sr)
  for (let i = 0; i < n && at + i < x.length; i++) {
    const g = Math.min(1, (i + 1) / ramp, (n - i) / ramp)
    x[at + i] += amp(-10) * g * Math.sin((TAU * 3000 * i) / sr)
  }
}
/** Data burst: random ±1 bits in 2400 Hz slots for 80 ms. */
const dataBurst: Event = (x, at, sr, r) => {
  const slot = Math.round(sr / 2400)
  let bit = 1
  for (let i = 0; i < 0.08 * sr && at + i < x.length; i++) {
    if (i % slot === 0) bit = r() < 0.5 ? 1 : -1
    x[at + i] += amp(-14) * bit
  }
}
/** Click: one full-size sample then 2 ms of decaying ringing (a relay or a static discharge). */
const click =
  (dbfs: number): Event =>
  (x, at, sr, r) => {
    const a = amp(dbfs)
    x[at] += a
    for (let i = 1; i < 0.002 * sr && at + i < x.length; i++)
      x[at + i] += a * (2 * r() - 1) * Math.exp(-i / (0.0004 * sr))
  }

function train(
  seconds: number,
  sampleRate: number,
  seed: number,
  gaps: [number, number],
  pick: (k: number, r: () => number) => Event,
): KnownEvents {
  const n = Math.round(seconds * sampleRate)
  const samples = background(n, sampleRate, seed)
  const r = prng(seed + 100)
  const onsets: number[] = []
  let at = Math.round(0.3 * sampleRate)
  for (let k = 0; at < n - 0.3 * sampleRate; k++) {
    pick(k, r)(samples, at, sampleRate, r)
    onsets.push(at / sampleRate)
    at += Math.round((gaps[0] + (gaps[1] - gaps[0]) * r()) * sampleRate)
  }
  return { sampleRate, samples, onsets }
}

/** Noise, tone and data bursts in turn, 180–500 ms apart. */
export const burstTrain = (seconds: number, sampleRate: number, seed = 1) =>
  train(seconds, sampleRate, seed, [0.18, 0.5], (k) => [noiseBurst, toneBurst, dataBurst][k % 3])

/** Clicks from −26 to −6 dBFS, 60–300 ms apart. */
export const clickTrain = (seconds: number, sampleRate: number, seed = 2) =>
  train(seconds, sampleRate, seed, [0.06, 0.3], (_k, r) => click(-26 + 20 * r()))

/** Mains hum (50 Hz unless told): harmonics 1–5 at fixed amplitudes and phases, plus white noise 46 dB below the fundamental. */
export function humWithHarmonics(seconds: number, sampleRate: number, seed = 3, hz = 50): Float32Array {
  const n = Math.round(seconds * sampleRate)
  const r = prng(seed)
  const h = [
    [1, 0],
    [0.5, 1.1],
    [0.35, 2.3],
    [0.2, 0.4],
    [0.12, 1.9],
  ]
  const x = new Float32Array(n)
  for (let i = 0; i < n; i++) {
    let s = 0
    for (let k = 0; k < h.length; k++) s += h[k][0] * Math.sin((TAU * hz * (k + 1) * i) / sampleRate + h[k][1])
    x[i] = 0.2 * s + 0.2 * amp(-46) * Math.sqrt(3) * (2 * r() - 1)
  }
  return x
}

/** Precision, recall and F-measure of detections against known times, each matched at most once within ±tolerance (MIREX onset evaluation, common practice). */
export function fMeasure(known: number[], found: number[], tolerance: number) {
  const used = new Set<number>()
  let hits = 0
  for (const t of known) {
    let best = -1
    for (let j = 0; j < found.length; j++) {
      if (used.has(j) || Math.abs(found[j] - t) > tolerance) continue
      if (best < 0 || Math.abs(found[j] - t) < Math.abs(found[best] - t)) best = j
    }
    if (best >= 0) {
      used.add(best)
      hits++
    }
  }
  const precision = found.length ? hits / found.length : 0
  const recall = known.length ? hits / known.length : 0
  return { precision, recall, f: precision + recall > 0 ? (2 * precision * recall) / (precision + recall) : 0 }
}
