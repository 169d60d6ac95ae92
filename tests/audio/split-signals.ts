// Sweeps for the split detector, built here from their definitions (not by the
// code under test): five to eight pieces of electromagnetic-like sound, each of
// a different kind from its neighbour, joined with or without a pause at known
// sample positions, over a faint hiss (a coil's own noise).
import { prng } from '../../server/audio/synth'

const TAU = 2 * Math.PI
const amp = (dbfs: number) => 10 ** (dbfs / 20)

type Piece = (n: number, sr: number, r: () => number) => Float32Array

/** Mains hum: 50 or 60 Hz with decaying harmonics 2–7. */
const hum =
  (hz: number): Piece =>
  (n, sr, r) => {
    const x = new Float32Array(n)
    const phases = Array.from({ length: 7 }, () => TAU * r())
    for (let i = 0; i < n; i++) {
      let v = 0
      for (let h = 1; h <= 7; h++) v += Math.sin((TAU * hz * h * i) / sr + phases[h - 1]) / h ** 1.2
      x[i] = 0.25 * v
    }
    return x
  }

/** Gated data bursts: random bits in `baud` slots, `onMs` on and `offMs` off (silent). */
const gatedBursts =
  (baud: number, onMs: number, offMs: number): Piece =>
  (n, sr, r) => {
    const x = new Float32Array(n)
    const slot = Math.max(1, Math.round(sr / baud))
    const period = Math.round(((onMs + offMs) * sr) / 1000)
    const on = Math.round((onMs * sr) / 1000)
    let bit = 1
    for (let i = 0; i < n; i++) {
      if (i % slot === 0) bit = r() < 0.5 ? 1 : -1
      x[i] = i % period < on ? 0.3 * bit : 0
    }
    return x
  }

/** Whine: a high tone with slight frequency wobble and its second harmonic. */
const whine =
  (hz: number): Piece =>
  (n, sr) => {
    const x = new Float32Array(n)
    let ph = 0
    for (let i = 0; i < n; i++) {
      ph += (TAU * hz * (1 + 0.002 * Math.sin((TAU * 3 * i) / sr))) / sr
      x[i] = 0.3 * Math.sin(ph) + 0.05 * Math.sin(2 * ph)
    }
    return x
  }

/** Motor: a harmonic series whose fundamental glides from `fromHz` to `toHz` (exponentially). */
const motor =
  (fromHz: number, toHz: number): Piece =>
  (n, sr) => {
    const x = new Float32Array(n)
    let ph = 0
    for (let i = 0; i < n; i++) {
      const f = fromHz * (toHz / fromHz) ** (i / n)
      ph += (TAU * f) / sr
      let v = 0
      for (let h = 1; h <= 8; h++) v += Math.sin(h * ph) / h
      x[i] = 0.2 * v * (0.8 + 0.2 * Math.sin((TAU * 4 * i) / sr))
    }
    return x
  }

/** Crackle: Poisson clicks (rate per second) of decaying broadband noise, over hiss. */
const crackle =
  (rate: number): Piece =>
  (n, sr, r) => {
    const x = new Float32Array(n)
    for (let i = 0; i < n; i++) x[i] = 0.01 * (2 * r() - 1)
    for (let i = 0; i < n; i++) {
      if (r() >= rate / sr) continue
      const a = 0.2 + 0.5 * r()
      for (let j = 0; j < 0.004 * sr && i + j < n; j++) x[i + j] += a * (2 * r() - 1) * Math.exp(-j / (0.0008 * sr))
    }
    return x
  }

/** The kinds, each with variants; a sweep never puts two of one kind side by side. */
const KINDS: Piece[][] = [
  [hum(50), hum(60)],
  [gatedBursts(9600, 40, 40), gatedBursts(2400, 70, 50)],
  [whine(7800), whine(11500), whine(4200)],
  [motor(90, 240), motor(300, 120)],
  [crackle(40), crackle(15)],
]

export interface Sweep {
  sampleRate: number
  samples: Float32Array
  /** Every boundary in samples: the end of a piece and the start of the next (one position when they touch). */
  boundaries: number[]
  /** Where each piece lies, [start, end) in samples. */
  pieces: [number, number][]
}

/** A sweep of `count` pieces (5–8), each 3–6 s; joins with a pause (0.6–1.2 s) where `pauses[i]`. */
export function buildSweep(seed: number, count: number, pauses: boolean[], sampleRate = 48000): Sweep {
  const r = prng(seed)
  const parts: Float32Array[] = []
  const pieces: [number, number][] = []
  const boundaries: number[] = []
  let at = 0
  let last = -1
  for (let p = 0; p < count; p++) {
    let kind = Math.floor(r() * KINDS.length)
    if (kind === last) kind = (kind + 1 + Math.floor(r() * (KINDS.length - 1))) % KINDS.length
    last = kind
    const variants = KINDS[kind]
    const make = variants[Math.floor(r() * variants.length)]
    const n = Math.round((3 + 3 * r()) * sampleRate)
    const piece = make(n, sampleRate, r)
    const gain = amp(-6 - 14 * r()) / piece.reduce((m, v) => Math.max(m, Math.abs(v)), 0)
    parts.push(piece.map((v) => v * gain))
    pieces.push([at, at + n])
    if (p > 0) boundaries.push(at)
    at += n
    if (p < count - 1) {
      boundaries.push(at)
      if (pauses[p]) {
        const gap = Math.round((0.6 + 0.6 * r()) * sampleRate)
        parts.push(new Float32Array(gap))
        at += gap
      }
    }
  }
  const samples = new Float32Array(at)
  let o = 0
  for (const part of parts) {
    samples.set(part, o)
    o += part.length
  }
  // The coil's own hiss under everything, −72 dBFS RMS.
  const hiss = amp(-72) * Math.sqrt(3)
  for (let i = 0; i < samples.length; i++) samples[i] += hiss * (2 * r() - 1)
  return { sampleRate, samples, boundaries: [...new Set(boundaries)].sort((a, b) => a - b), pieces }
}
