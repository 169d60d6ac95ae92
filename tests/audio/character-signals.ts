// Synthetic families of each character, built from the definitions in
// DEVELOPERS.md ("Character suggestions"), never from recordings: parameters
// and background noise vary per member, seeded so every run is the same.
import type { CharacterTag } from '@shared/schemas/character'
import { CharacterMeter } from '../../server/audio/character'
import { SpectrumMeter } from '../../server/audio/spectrum'
import { prng } from '../../server/audio/synth'

export const RATE = 32000
export const SECONDS = 3

type Rand = () => number

const TAU = 2 * Math.PI
const between = (r: Rand, a: number, b: number) => a + (b - a) * r()
const logBetween = (r: Rand, a: number, b: number) => a * (b / a) ** r()
function gauss(r: Rand): number {
  return Math.sqrt(-2 * Math.log(r() + 1e-12)) * Math.cos(TAU * r())
}

function rms(x: Float32Array): number {
  let s = 0
  for (const v of x) s += v * v
  return Math.sqrt(s / x.length)
}

/** White noise `snrDb` below the signal's RMS (or below `ref` when given), then the whole scaled to a peak level. */
function finish(x: Float32Array, r: Rand, snrDb: number, ref = rms(x)): Float32Array {
  const n = (ref * 10 ** (-snrDb / 20)) as number
  for (let i = 0; i < x.length; i++) x[i] += n * gauss(r)
  let peak = 0
  for (const v of x) peak = Math.max(peak, Math.abs(v))
  const k = 10 ** (between(r, -30, -3) / 20) / (peak || 1)
  for (let i = 0; i < x.length; i++) x[i] *= k
  return x
}

const N = RATE * SECONDS

/** Mains hum: 50 or 60 Hz (±0.3 %) with harmonics up to the 8th, odd ones usually stronger. */
function hum(r: Rand): Float32Array {
  const f = (r() < 0.5 ? 50 : 60) * (1 + between(r, -0.003, 0.003))
  const amps = Array.from({ length: 8 }, (_, i) => (i === 0 ? 1 : (i % 2 === 0 ? 1 : 0.5) * r() * 0.8))
  const phases = amps.map(() => TAU * r())
  const x = new Float32Array(N)
  for (let i = 0; i < N; i++) {
    let s = 0
    for (let h = 0; h < 8; h++) s += amps[h] * Math.sin((TAU * f * (h + 1) * i) / RATE + phases[h])
    x[i] = s
  }
  return finish(x, r, between(r, 15, 40))
}

/** Whine: one steady tone of 600 Hz – 12 kHz (drift under 0.1 %), maybe a weak second harmonic. */
function whine(r: Rand): Float32Array {
  const f = logBetween(r, 600, 12000)
  const drift = between(r, -0.001, 0.001)
  const h2 = f * 2 < RATE * 0.45 ? r() * 0.2 : 0
  const x = new Float32Array(N)
  let phase = 0
  for (let i = 0; i < N; i++) {
    phase += (TAU * f * (1 + (drift * i) / N)) / RATE
    x[i] = Math.sin(phase) + h2 * Math.sin(2 * phase)
  }
  return finish(x, r, between(r, 12, 35))
}

/** Burst train: bursts (noise or a tone) of 10–40 % of the period, repeated at 1.5–15 Hz. */
function burstTrain(r: Rand, content: 'noise' | 'tone' | 'either' = 'either'): Float32Array {
  const rate = logBetween(r, 1.5, 15)
  const period = RATE / rate
  const length = period * between(r, 0.1, 0.4)
  const toneHz = logBetween(r, 300, 5000)
  const tone = content === 'tone' || (content === 'either' && r() < 0.5) ? toneHz : 0
  const edge = RATE * 0.001
  const offset = r() * period
  const x = new Float32Array(N)
  for (let i = 0; i < N; i++) {
    const t = (i + offset) % period
    if (t >= length) continue
    const g = Math.min(1, t / edge, (length - t) / edge)
    x[i] = g * (tone ? Math.sin((TAU * tone * i) / RATE) : gauss(r) * 0.4)
  }
  return finish(x, r, between(r, 35, 55), 0.3)
}

/** Crackle: clicks at random times (Poisson, 3–40 a second), each a decaying impulse under 1 ms. */
function crackle(r: Rand): Float32Array {
  const perSecond = logBetween(r, 3, 40)
  const x = new Float32Array(N)
  let t = 0
  for (;;) {
    t += (-Math.log(r() + 1e-12) / perSecond) * RATE
    if (t >= N) break
    const a = (r() < 0.5 ? -1 : 1) * logBetween(r, 0.1, 1)
    const tau = RATE * between(r, 0.00005, 0.0003)
    for (let j = 0; j < tau * 4 && t + j < N; j++) x[Math.floor(t) + j] += a * Math.exp(-j / tau)
  }
  return finish(x, r, between(r, 40, 60), 0.3)
}

/** Hiss: broadband noise, white or pink (−3 dB an octave), steady. */
function hiss(r: Rand): Float32Array {
  const x = new Float32Array(N)
  const pink = r() < 0.5
  // Paul Kellet's economy pink filter (common practice).
  let b0 = 0
  let b1 = 0
  let b2 = 0
  for (let i = 0; i < N; i++) {
    const w = gauss(r)
    if (!pink) {
      x[i] = w
      continue
    }
    b0 = 0.99765 * b0 + w * 0.099046
    b1 = 0.963 * b1 + w * 0.2965164
    b2 = 0.57 * b2 + w * 1.0526913
    x[i] = b0 + b1 + b2 + w * 0.1848
  }
  return finish(x, r, 80)
}

/** Motor: a harmonic series (fundamental 25–180 Hz, ten harmonics) whose speed glides 5–30 %. */
function motor(r: Rand): Float32Array {
  const f0 = logBetween(r, 25, 180)
  const depth = between(r, 0.05, 0.3)
  const sweep = r() < 0.5
  const cycle = between(r, 1.5, 4)
  const slope = between(r, 0.6, 1.3)
  const amps = Array.from({ length: 10 }, (_, h) => 1 / (h + 1) ** slope)
  const x = new Float32Array(N)
  let phase = 0
  for (let i = 0; i < N; i++) {
    const u = i / RATE
    const f = sweep ? f0 * (1 + (depth * i) / N) : f0 * (1 + depth * 0.5 * Math.sin((TAU * u) / cycle))
    phase += (TAU * f) / RATE
    let s = 0
    for (let h = 0; h < 10; h++) if (f * (h + 1) < RATE * 0.45) s += amps[h] * Math.sin((h + 1) * phase)
    x[i] = s
  }
  return finish(x, r, between(r, 20, 40))
}

/** Data chirp: packets of frequency-shift keying (2–4 tones from 1–3 kHz up, 300–2400 baud) or of sweeps (8–40 ms, 2–5×). */
function dataChirp(r: Rand): Float32Array {
  const x = new Float32Array(N)
  const fsk = r() < 0.5
  // Distinct tones, each 25–60 % above the last.
  const tones = [logBetween(r, 1000, 3000)]
  for (let k = 1 + Math.floor(r() * 3); k > 0; k--) tones.push(tones[tones.length - 1] * between(r, 1.25, 1.6))
  const baud = logBetween(r, 300, 2400)
  const sweepMs = between(r, 8, 40)
  const lo = logBetween(r, 800, 2000)
  const hi = lo * between(r, 2, 5)
  let i = Math.floor(r() * RATE * 0.1)
  let phase = 0
  while (i < N) {
    const packet = Math.floor(RATE * between(r, 0.03, 0.3))
    let symbol = 0
    for (let j = 0; j < packet && i < N; j++, i++) {
      let f: number
      if (fsk) {
        if (j % Math.round(RATE / baud) === 0) symbol = Math.floor(r() * tones.length)
        f = tones[symbol]
      } else {
        const s = ((j / RATE) * 1000) % sweepMs
        f = lo * (hi / lo) ** (s / sweepMs)
      }
      phase += (TAU * f) / RATE
      x[i] = Math.sin(phase)
    }
    i += Math.floor(RATE * between(r, 0.02, 0.3))
  }
  return finish(x, r, between(r, 35, 55), 0.5)
}

export const FAMILIES: Record<CharacterTag, (r: Rand) => Float32Array> = {
  hum,
  whine,
  'burst train': burstTrain,
  crackle,
  hiss,
  motor,
  'data chirp': dataChirp,
}

/**
 * Families for the sounds-like check: one kind of signal each, so bursts of noise and bursts of a
 * tone are two families (they share a tag but not a sound).
 */
export const SOUND_FAMILIES: Record<string, (r: Rand) => Float32Array> = {
  hum,
  whine,
  'noise bursts': (r) => burstTrain(r, 'noise'),
  'tone bursts': (r) => burstTrain(r, 'tone'),
  crackle,
  hiss,
  motor,
  'data chirp': dataChirp,
}

export function soundMember(family: string, seed: number): Float32Array {
  return SOUND_FAMILIES[family](prng(seed * 6151 + family.length * 7877))
}

/** One member of a family: its samples from a seed. */
export function member(tag: CharacterTag, seed: number): Float32Array {
  return FAMILIES[tag](prng(seed * 7919 + tag.length * 104729))
}

/** The character of a mono signal as the analysis computes it (blocks of 4096, spectrum first). */
export function characterOf(x: Float32Array, rate = RATE) {
  const spectrum = new SpectrumMeter(rate, 1, x.length)
  const meter = new CharacterMeter(rate, x.length)
  for (let i = 0; i < x.length; i += 4096) {
    const block = [x.subarray(i, Math.min(x.length, i + 4096))]
    spectrum.push(block)
    meter.push(block)
  }
  return meter.finish(spectrum.finish())
}
