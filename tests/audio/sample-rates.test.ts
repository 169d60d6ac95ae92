// K-weighting derived for the file's own sample rate (ITU-R BS.1770-4 gives
// coefficients for 48 kHz only). Checks: the derivation reproduces the
// Recommendation's 48 kHz Tables 1 and 2; at 44.1 and 96 kHz the filter keeps
// the 48 kHz filter's response; and the EBU Tech 3341 / 3342 tone cases give
// the documents' expected values at 44.1 and 96 kHz.
import { describe, expect, it } from 'vitest'
import { biquadGain, preFilter, rlbHighPass, type Biquad } from '../../server/audio/k-weighting'
import { EBU_3342_CASES, loudnessRange, measure, sine, steppedSine, type ToneSegment } from '../helpers/signals'

// ITU-R BS.1770-4 Table 1 (pre-filter) and Table 2 (RLB high-pass), 48 kHz, as printed (recalled from memory).
const TABLE_1: Biquad = {
  b0: 1.53512485958697,
  b1: -2.69169618940638,
  b2: 1.19839281085285,
  a1: -1.69065929318241,
  a2: 0.73248077421585,
}
const TABLE_2: Biquad = { b0: 1.0, b1: -2.0, b2: 1.0, a1: -1.99004745483398, a2: 0.99007225036621 }

function kGainDb(f: { pre: Biquad; hp: Biquad }, hz: number, rate: number): number {
  return 20 * Math.log10(biquadGain(f.pre, hz, rate) * biquadGain(f.hp, hz, rate))
}

describe('K-weighting coefficients (ITU-R BS.1770-4 Tables 1 and 2)', () => {
  it('the derivation at 48 kHz reproduces the published coefficients to 1e-6', () => {
    for (const [derived, table] of [
      [preFilter(48000), TABLE_1],
      [rlbHighPass(48000), TABLE_2],
    ] as const) {
      for (const k of ['b0', 'b1', 'b2', 'a1', 'a2'] as const)
        expect(Math.abs(derived[k] - table[k])).toBeLessThan(1e-6)
    }
  })

  for (const rate of [44100, 96000]) {
    // Within 0.03 dB: the Recommendation's unnormalised high-pass numerator (1, −2, 1) makes the passband
    // gain drift by ~0.02 dB with the rate. Applying the 48 kHz table at these rates instead would be
    // off by 0.2 dB (44.1 kHz) and 0.65 dB (96 kHz) at 1 kHz, and by 1–10 dB at 20 Hz.
    it(`at ${rate} Hz the response matches the published 48 kHz filter within 0.03 dB from 20 Hz to 10 kHz`, () => {
      const published = { pre: TABLE_1, hp: TABLE_2 }
      const derived = { pre: preFilter(rate), hp: rlbHighPass(rate) }
      for (const hz of [20, 50, 100, 500, 1000, 2000, 5000, 10000]) {
        expect(Math.abs(kGainDb(derived, hz, rate) - kGainDb(published, hz, 48000))).toBeLessThan(0.03)
      }
    })

    it(`at ${rate} Hz the coefficients differ from the 48 kHz table (they are really re-derived)`, () => {
      expect(Math.abs(preFilter(rate).a1 - TABLE_1.a1)).toBeGreaterThan(1e-3)
      expect(Math.abs(rlbHighPass(rate).a1 - TABLE_2.a1)).toBeGreaterThan(1e-4)
    })
  }
})

function expectLu(measured: number | null, expected: number, tolerance: number) {
  expect(measured).not.toBeNull()
  expect(Math.abs(measured! - expected)).toBeLessThanOrEqual(tolerance)
}

const TONE_CASES: { name: string; segments: ToneSegment[] }[] = [
  { name: 'EBU 3341 case 1 (−23 dBFS 20 s)', segments: [{ seconds: 20, dbfs: -23 }] },
  {
    name: 'EBU 3341 case 3 (−36/−23/−36 dBFS)',
    segments: [
      { seconds: 10, dbfs: -36 },
      { seconds: 60, dbfs: -23 },
      { seconds: 10, dbfs: -36 },
    ],
  },
  {
    name: 'EBU 3341 case 4 (−72/−36/−23/−36/−72 dBFS)',
    segments: [
      { seconds: 10, dbfs: -72 },
      { seconds: 10, dbfs: -36 },
      { seconds: 20, dbfs: -23 },
      { seconds: 10, dbfs: -36 },
      { seconds: 10, dbfs: -72 },
    ],
  },
  {
    name: 'EBU 3341 case 5 (−26/−20/−26 dBFS)',
    segments: [
      { seconds: 20, dbfs: -26 },
      { seconds: 20.1, dbfs: -20 },
      { seconds: 20, dbfs: -26 },
    ],
  },
]

for (const rate of [44100, 96000]) {
  describe(`EBU Tech 3341 / 3342 tone cases at ${rate} Hz`, () => {
    for (const c of TONE_CASES) {
      it(`${c.name} → −23.0 LUFS ±0.1`, () => {
        const s = steppedSine(rate, c.segments)
        expectLu(measure([s, s], { sampleRate: rate, channelMask: 0 }).loudness.integratedLufs, -23, 0.1)
      })
    }

    it('EBU 3341 case 2 (−33 dBFS) → −33.0 LUFS ±0.1', () => {
      const s = steppedSine(rate, [{ seconds: 20, dbfs: -33 }])
      expectLu(measure([s, s], { sampleRate: rate, channelMask: 0 }).loudness.integratedLufs, -33, 0.1)
    })

    it('EBU 3341 case 6 (5 channels, C at −24 dBFS; see ebu-3341.test.ts) → −23.0 LUFS ±0.1', () => {
      const channels = [-28, -28, -24, -30, -30].map((dbfs) => steppedSine(rate, [{ seconds: 20, dbfs }]))
      expectLu(measure(channels, { sampleRate: rate, channelMask: 0 }).loudness.integratedLufs, -23, 0.1)
    })

    it('EBU 3341 case 16 (fs/4-like crest: 45° phase sine at a quarter of 48 kHz, −6 dBFS) → −6.0 dBTP +0.2/−0.4', () => {
      const s = sine(rate, 2, 12000, -6, 45)
      const tp = measure([s, s], { sampleRate: rate, channelMask: 0, encoding: 'float' }).levels.truePeakDbtp
      expect(tp).not.toBeNull()
      expect(tp!).toBeGreaterThanOrEqual(-6.4)
      expect(tp!).toBeLessThanOrEqual(-5.8)
    })

    for (const c of EBU_3342_CASES) {
      it(`EBU 3342 ${c.name} (±1 LU)`, () => {
        expectLu(loudnessRange(rate, c.segments), c.expectedLu, 1)
      })
    }
  })
}
