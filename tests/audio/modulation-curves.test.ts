// The modulation curves as pure functions over synthetic signals whose envelope
// or frequency is known in closed form (the reference is the formula the signal
// is built from): an amplitude-modulated tone's envelope, a glide's instantaneous
// frequency f(t) = dφ/dt / 2π.
import { describe, expect, it } from 'vitest'
import {
  EnvelopeFollower,
  SpectralTracker,
  controlFraction,
  curvePoints,
  spectralContext,
  type CurveTracker,
} from '../../server/modulation/curves'

const RATE = 48000

function feed(t: CurveTracker, planar: Float32Array[], block = 65536): Float32Array {
  const n = planar[0].length
  for (let i = 0; i < n; i += block) t.push(planar.map((c) => c.subarray(i, Math.min(n, i + block))))
  return t.finish()
}

/** Pearson's correlation coefficient. */
function correlation(a: ArrayLike<number>, b: ArrayLike<number>): number {
  const n = a.length
  let ma = 0
  let mb = 0
  for (let i = 0; i < n; i++) [ma, mb] = [ma + a[i], mb + b[i]]
  ;[ma, mb] = [ma / n, mb / n]
  let ab = 0
  let aa = 0
  let bb = 0
  for (let i = 0; i < n; i++) {
    const u = a[i] - ma
    const v = b[i] - mb
    ab += u * v
    aa += u * u
    bb += v * v
  }
  return ab / Math.sqrt(aa * bb)
}

function amTone(seconds: number, carrierHz: number, env: (t: number) => number): Float32Array {
  const x = new Float32Array(Math.round(seconds * RATE))
  for (let i = 0; i < x.length; i++) x[i] = env(i / RATE) * Math.sin((2 * Math.PI * carrierHz * i) / RATE)
  return x
}

/** Exponential glide from f0 to f1: φ(t) = 2π f0 (e^{kt} − 1)/k, so f(t) = f0 e^{kt}. */
function expGlide(seconds: number, f0: number, f1: number, amp = 0.5) {
  const k = Math.log(f1 / f0) / seconds
  const x = new Float32Array(Math.round(seconds * RATE))
  for (let i = 0; i < x.length; i++) x[i] = amp * Math.sin((2 * Math.PI * f0 * (Math.exp((k * i) / RATE) - 1)) / k)
  return { x, f: (t: number) => f0 * Math.exp(k * t) }
}

/** Linear glide: φ(t) = 2π (f0 t + (f1 − f0) t² / 2T), so f(t) = f0 + (f1 − f0) t / T. */
function linGlide(seconds: number, f0: number, f1: number, amp = 0.5) {
  const x = new Float32Array(Math.round(seconds * RATE))
  for (let i = 0; i < x.length; i++) {
    const t = i / RATE
    x[i] = amp * Math.sin(2 * Math.PI * (f0 * t + ((f1 - f0) * t * t) / (2 * seconds)))
  }
  return { x, f: (t: number) => f0 + ((f1 - f0) * t) / seconds }
}

const worstError = (curve: Float32Array, rateHz: number, f: (t: number) => number) =>
  Math.max(...Array.from(curve, (v, k) => Math.abs(v / f(k / rateHz) - 1)))

describe('envelope', () => {
  const cases = [
    { name: '3 Hz sine AM on 1 kHz', carrier: 1000, env: (t: number) => 0.5 + 0.4 * Math.sin(2 * Math.PI * 3 * t) },
    { name: 'a swell and decay on 440 Hz', carrier: 440, env: (t: number) => 0.9 * Math.sin((Math.PI * t) / 4) ** 2 },
    {
      name: '1.5 Hz triangle AM on 3 kHz',
      carrier: 3000,
      env: (t: number) => 0.1 + 0.8 * Math.abs(((t * 1.5) % 1) * 2 - 1),
    },
  ]
  for (const c of cases) {
    it(`of ${c.name} correlates ≥ 0.99 with the known envelope`, () => {
      const x = amTone(4, c.carrier, c.env)
      const rateHz = 500
      const curve = feed(new EnvelopeFollower(RATE, x.length, { attackMs: 1, releaseMs: 5, rateHz }), [x])
      expect(curve.length).toBe(2000)
      const known = Array.from(curve, (_, k) => c.env(k / rateHz))
      expect(correlation(curve, known)).toBeGreaterThanOrEqual(0.99)
      // Natural unit: peak amplitude, 0…1 of full scale, within the envelope's own change over the 10 ms peak hold and the attack.
      const mid = Math.round(curve.length / 2)
      expect(Math.abs(curve[mid] - c.env(mid / rateHz))).toBeLessThan(0.03)
    })
  }

  it('follows the loudest channel, and a slow release holds a burst', () => {
    const quiet = amTone(1, 1000, () => 0.1)
    const loud = amTone(1, 1000, (t) => (t >= 0.2 && t < 0.3 ? 0.8 : 0))
    const fast = feed(new EnvelopeFollower(RATE, RATE, { attackMs: 0.5, releaseMs: 5, rateHz: 100 }), [quiet, loud])
    expect(fast[25]).toBeGreaterThan(0.75) // inside the burst: the loud channel
    expect(fast[50]).toBeGreaterThan(0.09) // after it: the quiet channel, not zero
    expect(fast[50]).toBeLessThan(0.12)
    const slow = feed(new EnvelopeFollower(RATE, RATE, { attackMs: 0.5, releaseMs: 500, rateHz: 100 }), [quiet, loud])
    // 0.8 · e^(−0.2 s / 0.5 s) ≈ 0.54 two tenths of a second after the burst.
    expect(slow[50]).toBeGreaterThan(0.5)
    expect(slow[50]).toBeLessThan(0.58)
  })

  it('makes round(seconds × rateHz) points, also above the audio rate and from blocks of any size', () => {
    const x = amTone(0.5, 1000, () => 0.5)
    expect(
      feed(new EnvelopeFollower(RATE, x.length, { attackMs: 0, releaseMs: 10, rateHz: 7 }), [x], 1000).length,
    ).toBe(curvePoints(x.length, RATE, 7))
    expect(curvePoints(x.length, RATE, 7)).toBe(4)
    const dense = feed(new EnvelopeFollower(RATE, x.length, { attackMs: 0, releaseMs: 10, rateHz: 96000 }), [x], 333)
    expect(dense.length).toBe(48000)
  })
})

describe('tone', () => {
  it('follows an exponential glide 100 Hz → 3.2 kHz within 1 % of the true frequency at every point', () => {
    const g = expGlide(4, 100, 3200)
    const curve = feed(
      new SpectralTracker(RATE, g.x.length, { kind: 'tone', attackMs: 0, releaseMs: 0, rateHz: 200 }),
      [g.x],
    )
    expect(curve.length).toBe(800)
    expect(worstError(curve, 200, g.f)).toBeLessThan(0.01)
  })

  it('at 2 points a second (one frame per point, the samples between skipped) still reads each point within 1 %', () => {
    const g = expGlide(4, 100, 3200)
    const curve = feed(
      new SpectralTracker(RATE, g.x.length, { kind: 'tone', attackMs: 0, releaseMs: 0, rateHz: 2 }),
      [g.x],
      4096,
    )
    expect(curve.length).toBe(8)
    expect(worstError(curve, 2, g.f)).toBeLessThan(0.01)
  })

  it('follows a linear glide 2 kHz → 400 Hz under noise within 1 % (a whole take: away from its ends, where half a frame is silence)', () => {
    const g = linGlide(3, 2000, 400)
    let seed = 7
    for (let i = 0; i < g.x.length; i++) {
      seed = (seed * 1103515245 + 12345) % 2 ** 31
      g.x[i] += 0.02 * (seed / 2 ** 30 - 1) // white noise about 30 dB below the tone
    }
    const curve = feed(
      new SpectralTracker(RATE, g.x.length, { kind: 'tone', attackMs: 0, releaseMs: 0, rateHz: 1000 }),
      [g.x],
    )
    const half = Math.ceil((spectralContext(RATE) / RATE) * 1000)
    const inner = curve.subarray(half, curve.length - half)
    expect(worstError(inner, 1000, (t) => g.f(t + half / 1000))).toBeLessThan(0.01)
  })

  it('follows the same glide within 1 % at every point of an excerpt, its ends included, given the take around it', () => {
    const g = linGlide(3, 2000, 400)
    const [from, to] = [RATE, 2 * RATE] // the excerpt 1–2 s
    const lead = spectralContext(RATE)
    const tracker = new SpectralTracker(
      RATE,
      to - from,
      { kind: 'tone', attackMs: 0, releaseMs: 0, rateHz: 1000 },
      lead,
    )
    const curve = feed(tracker, [g.x.subarray(from - lead, to + lead)])
    expect(curve.length).toBe(1000)
    expect(worstError(curve, 1000, (t) => g.f(t + 1))).toBeLessThan(0.01)
  })

  it('holds the last frequency through silence and slews in octaves with attack/release', () => {
    const x = new Float32Array(RATE * 2)
    for (let i = 0; i < RATE; i++) x[i] = 0.5 * Math.sin((2 * Math.PI * 440 * i) / RATE)
    const held = feed(new SpectralTracker(RATE, x.length, { kind: 'tone', attackMs: 0, releaseMs: 0, rateHz: 10 }), [x])
    // Held from the last frame that heard the tone, which is partly silence: within 3 %.
    expect(Math.abs(held[19] / 440 - 1)).toBeLessThan(0.03)
    expect(held[19]).toBe(held[15])
    // A 110 → 880 Hz step with a 100 ms attack: one time constant after the step, 63 % of the 3 octaves.
    const step = new Float32Array(RATE * 2)
    for (let i = 0; i < step.length; i++) step[i] = 0.5 * Math.sin((2 * Math.PI * (i < RATE ? 110 : 880) * i) / RATE)
    const slewed = feed(
      new SpectralTracker(RATE, step.length, { kind: 'tone', attackMs: 100, releaseMs: 0, rateHz: 1000 }),
      [step],
    )
    const octavesUp = Math.log2(slewed[1100] / 110)
    expect(octavesUp).toBeGreaterThan(3 * 0.55)
    expect(octavesUp).toBeLessThan(3 * 0.72)
  })
})

describe('centroid', () => {
  it('of two tones of equal power lies at their mean frequency, and follows a glide within 1 %', () => {
    const x = new Float32Array(RATE)
    for (let i = 0; i < x.length; i++)
      x[i] = 0.3 * Math.sin((2 * Math.PI * 500 * i) / RATE) + 0.3 * Math.sin((2 * Math.PI * 1500 * i) / RATE)
    const two = feed(new SpectralTracker(RATE, x.length, { kind: 'centroid', attackMs: 0, releaseMs: 0, rateHz: 20 }), [
      x,
    ])
    expect(Math.abs(two[10] / 1000 - 1)).toBeLessThan(0.01)
    const g = expGlide(4, 200, 1600)
    const glide = feed(
      new SpectralTracker(RATE, g.x.length, { kind: 'centroid', attackMs: 0, releaseMs: 0, rateHz: 100 }),
      [g.x],
    )
    expect(worstError(glide, 100, g.f)).toBeLessThan(0.01)
  })
})

describe('control values', () => {
  it('are the envelope itself, or octaves above the reference over the octave span, clamped to 0…1', () => {
    expect(controlFraction(0.25, 'envelope', 20, 10)).toBe(0.25)
    expect(controlFraction(1.7, 'envelope', 20, 10)).toBe(1)
    expect(controlFraction(640, 'tone', 20, 10)).toBeCloseTo(0.5, 12) // 640 Hz = 20 Hz · 2^5
    expect(controlFraction(20 * 2 ** 10, 'centroid', 20, 10)).toBeCloseTo(1, 12)
    expect(controlFraction(10, 'tone', 20, 10)).toBe(0)
    expect(controlFraction(110, 'tone', 55, 5)).toBeCloseTo(0.2, 12)
  })
})
