// Deterministic test and demo signals (planar Float32Array[]), seeded so every run
// yields the same samples. They imitate what an induction-coil pickup hears near
// mains wiring, switch-mode supplies, data lines and motors.
// Levels: `levelDbfs` is the peak level for tonal generators and the RMS level for noise.

export interface SynthBase {
  seconds: number
  sampleRate: number
  channels?: number
  levelDbfs?: number
  seed?: number
}

/** mulberry32: small, fast, good enough for test signals. Returns uniforms in [0, 1). */
export function prng(seed = 1): () => number {
  let s = seed >>> 0
  return () => {
    let t = (s = (s + 0x6d2b79f5) >>> 0)
    t = Math.imul(t ^ (t >>> 15), t | 1)
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61)
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296
  }
}

const dbToAmp = (db: number) => 10 ** (db / 20)
const TAU = 2 * Math.PI

function frameCount(o: SynthBase): number {
  if (!(o.seconds >= 0) || !Number.isInteger(o.sampleRate) || o.sampleRate <= 0)
    throw new RangeError('seconds >= 0 and an integer sampleRate are required')
  return Math.round(o.seconds * o.sampleRate)
}

function scalePeak(x: Float32Array, db: number): Float32Array {
  let peak = 0
  for (const v of x) peak = Math.max(peak, Math.abs(v))
  const k = peak > 0 ? dbToAmp(db) / peak : 0
  for (let i = 0; i < x.length; i++) x[i] *= k
  return x
}

function scaleRms(x: Float32Array, db: number): Float32Array {
  let sum = 0
  for (const v of x) sum += v * v
  const rms = Math.sqrt(sum / Math.max(1, x.length))
  const k = rms > 0 ? dbToAmp(db) / rms : 0
  for (let i = 0; i < x.length; i++) x[i] *= k
  return x
}

/** Same tonal signal on every channel (copies, so callers may change one channel). */
function copies(x: Float32Array, channels = 1): Float32Array[] {
  return Array.from({ length: channels }, (_, c) => (c === 0 ? x : x.slice()))
}

/** Independent noise per channel: channel c uses seed + c. */
function perChannel(o: SynthBase, make: (rand: () => number) => Float32Array): Float32Array[] {
  return Array.from({ length: o.channels ?? 1 }, (_, c) => make(prng((o.seed ?? 1) + c)))
}

export function sine(o: SynthBase & { hz: number; phase?: number }): Float32Array[] {
  const n = frameCount(o)
  const a = dbToAmp(o.levelDbfs ?? -6)
  const x = new Float32Array(n)
  const w = (TAU * o.hz) / o.sampleRate
  for (let i = 0; i < n; i++) x[i] = a * Math.sin(w * i + (o.phase ?? 0))
  return copies(x, o.channels)
}

export function whiteNoise(o: SynthBase): Float32Array[] {
  return perChannel(o, (r) => {
    const x = new Float32Array(frameCount(o))
    for (let i = 0; i < x.length; i++) x[i] = 2 * r() - 1
    return scaleRms(x, o.levelDbfs ?? -20)
  })
}

/** Pink (−3 dB/octave) noise from white noise through a bank of first-order low-passes (coefficients from memory, common practice). */
export function pinkNoise(o: SynthBase): Float32Array[] {
  return perChannel(o, (r) => {
    const x = new Float32Array(frameCount(o))
    let b0 = 0,
      b1 = 0,
      b2 = 0,
      b3 = 0,
      b4 = 0,
      b5 = 0,
      b6 = 0
    for (let i = 0; i < x.length; i++) {
      const w = 2 * r() - 1
      b0 = 0.99886 * b0 + w * 0.0555179
      b1 = 0.99332 * b1 + w * 0.0750759
      b2 = 0.969 * b2 + w * 0.153852
      b3 = 0.8665 * b3 + w * 0.3104856
      b4 = 0.55 * b4 + w * 0.5329522
      b5 = -0.7616 * b5 - w * 0.016898
      x[i] = b0 + b1 + b2 + b3 + b4 + b5 + b6 + w * 0.5362
      b6 = w * 0.115926
    }
    return scaleRms(x, o.levelDbfs ?? -20)
  })
}

/** Mains hum: fundamental plus harmonics (odd ones stronger, as transformer buzz has), with a slow frequency wander. */
export function mainsHum(o: SynthBase & { hz: 50 | 60; harmonics?: number }): Float32Array[] {
  const n = frameCount(o)
  const r = prng(o.seed ?? 1)
  const x = new Float32Array(n)
  const h = Math.max(1, o.harmonics ?? 6)
  let phase = 0
  let drift = 0
  for (let i = 0; i < n; i++) {
    if (i % 256 === 0) drift = Math.max(-1, Math.min(1, drift + (r() - 0.5) * 0.2)) // grid frequency wanders ±0.05 %
    phase += (TAU * o.hz * (1 + drift * 0.0005)) / o.sampleRate
    let s = 0
    for (let k = 1; k <= h; k++) s += ((k % 2 ? 1 : 0.4) / k) * Math.sin(k * phase)
    x[i] = s + (r() - 0.5) * 0.002
  }
  return copies(scalePeak(x, o.levelDbfs ?? -12), o.channels)
}

/** Switch-mode supply whine: a high carrier amplitude-modulated by the rectified mains, giving faint sidebands. */
export function switchingWhine(o: SynthBase & { hz?: number; sidebandHz?: number }): Float32Array[] {
  const n = frameCount(o)
  const hz = o.hz ?? 15600
  const sb = o.sidebandHz ?? 100
  const x = new Float32Array(n)
  for (let i = 0; i < n; i++) {
    const t = i / o.sampleRate
    x[i] = Math.sin(TAU * hz * t) * (1 + 0.05 * Math.sin(TAU * sb * t)) + 0.1 * Math.sin(TAU * 2 * hz * t)
  }
  return copies(scalePeak(x, o.levelDbfs ?? -18), o.channels)
}

/** Data bursts: gated trains of noisy pulses, like a packet radio or a serial line heard through a coil. */
export function dataBursts(
  o: SynthBase & { burstsPerSecond?: number; duty?: number; pulseHz?: number },
): Float32Array[] {
  const n = frameCount(o)
  const r = prng(o.seed ?? 1)
  const period = Math.max(1, Math.round(o.sampleRate / (o.burstsPerSecond ?? 6)))
  const on = Math.round(period * (o.duty ?? 0.35))
  const pulse = Math.max(2, Math.round(o.sampleRate / (o.pulseHz ?? 2400)))
  const x = new Float32Array(n)
  let bit = 1
  for (let i = 0; i < n; i++) {
    const inBurst = i % period
    if (i % pulse === 0) bit = r() < 0.5 ? 1 : -1 // random bit per pulse slot
    x[i] = inBurst < on ? bit * 0.8 + (r() - 0.5) * 0.4 : (r() - 0.5) * 0.01
  }
  return copies(scalePeak(x, o.levelDbfs ?? -10), o.channels)
}

/** Motor sweep: an exponential rise in pitch of a buzzy tone (a few harmonics), as a spinning-up motor. */
export function motorSweep(o: SynthBase & { fromHz?: number; toHz?: number }): Float32Array[] {
  const n = frameCount(o)
  const f0 = o.fromHz ?? 40
  const f1 = o.toHz ?? 400
  const x = new Float32Array(n)
  let phase = 0
  for (let i = 0; i < n; i++) {
    phase += (TAU * f0 * (f1 / f0) ** (i / Math.max(1, n - 1))) / o.sampleRate
    x[i] = Math.sin(phase) + 0.5 * Math.sin(2 * phase) + 0.33 * Math.sin(3 * phase) + 0.25 * Math.sin(5 * phase)
  }
  return copies(scalePeak(x, o.levelDbfs ?? -12), o.channels)
}

/** Quiet room tone: pink noise at `levelDbfs` RMS with a little hum 12 dB below it. */
export function roomTone(o: SynthBase & { humHz?: 50 | 60 }): Float32Array[] {
  const level = o.levelDbfs ?? -60
  const noise = pinkNoise({ ...o, levelDbfs: level })
  const hum = mainsHum({ ...o, channels: 1, hz: o.humHz ?? 50, harmonics: 3, levelDbfs: level - 12 })[0]
  for (const ch of noise) for (let i = 0; i < ch.length; i++) ch[i] += hum[i]
  return noise
}
