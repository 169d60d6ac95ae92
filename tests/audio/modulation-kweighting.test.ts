// The K-weighted envelope: the BS.1770-4 K-filter (pre-filter shelf and RLB
// high-pass; their coefficients are held to the Recommendation's 48 kHz table in
// tests/audio/sample-rates.test.ts) ahead of the envelope follower, scaled so a
// 1 kHz tone keeps its amplitude (common practice: the weighting's reference).
import { describe, expect, it } from 'vitest'
import { ModulationBody } from '@shared/schemas/modulation'
import { biquadGain, preFilter, rlbHighPass } from '../../server/audio/k-weighting'
import { EnvelopeFollower } from '../../server/modulation/curves'
import { KWeighting } from '../../server/modulation/k-weighted'

const RATE = 48000
const tone = (hz: number, amp: number) =>
  Float32Array.from({ length: RATE * 2 }, (_, i) => amp * Math.sin((2 * Math.PI * hz * i) / RATE))

function envelopeOf(x: Float32Array, weighted: boolean): number {
  const f = new EnvelopeFollower(RATE, x.length, { attackMs: 1, releaseMs: 50, rateHz: 100 })
  const k = new KWeighting(RATE, 1)
  for (let i = 0; i < x.length; i += 4096) {
    const block = [x.slice(i, i + 4096)]
    f.push(weighted ? k.apply(block) : block)
  }
  const curve = f.finish()
  return curve[Math.floor(curve.length * 0.75)] // well after the filter settles
}

const kGain = (hz: number) =>
  (biquadGain(preFilter(RATE), hz, RATE) * biquadGain(rlbHighPass(RATE), hz, RATE)) /
  (biquadGain(preFilter(RATE), 1000, RATE) * biquadGain(rlbHighPass(RATE), 1000, RATE))

describe('K-weighted envelope', () => {
  it('reads a 1 kHz tone as the plain envelope does', () => {
    expect(envelopeOf(tone(1000, 0.5), true)).toBeCloseTo(envelopeOf(tone(1000, 0.5), false), 2)
  })

  it('follows the K-filter response: hum at 50 Hz weighs less, 4 kHz more', () => {
    for (const hz of [50, 100, 4000, 10000]) {
      const expected = 0.5 * kGain(hz)
      expect(Math.abs(envelopeOf(tone(hz, 0.5), true) / expected - 1)).toBeLessThan(0.02)
    }
    expect(kGain(50)).toBeLessThan(0.9)
    expect(kGain(4000)).toBeGreaterThan(1.3)
  })

  it('is asked for with weighting "k"; plain is the default', () => {
    const base = {
      source: 'envelope',
      attackMs: 1,
      releaseMs: 5,
      rateHz: 100,
      range: { low: 0, high: 1 },
      format: 'csv',
    }
    expect(ModulationBody.parse(base).weighting).toBe('plain')
    expect(ModulationBody.parse({ ...base, weighting: 'k' }).weighting).toBe('k')
    expect(ModulationBody.safeParse({ ...base, weighting: 'a' }).success).toBe(false)
  })
})
