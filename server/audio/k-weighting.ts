// K-weighting of ITU-R BS.1770-4 (pre-filter high shelf followed by the RLB
// high-pass), derived for any sample rate from the analog prototype with the
// bilinear transform. The Recommendation prints coefficients only for 48 kHz;
// deriving them keeps 44.1 kHz, 96 kHz and other takes measured correctly.
// The prototype constants below are the widely used fit that reproduces the
// published 48 kHz table (tests/audio/sample-rates.test.ts checks that).

export interface Biquad {
  b0: number
  b1: number
  b2: number
  a1: number
  a2: number
}

const SHELF_F0 = 1681.974450955533
const SHELF_GAIN_DB = 3.999843853973347
const SHELF_Q = 0.7071752369554196
// Ratio of band gain to high gain of the shelf, part of the same fit.
const SHELF_VB_EXPONENT = 0.4996667741545416

const HIGHPASS_F0 = 38.13547087602444
const HIGHPASS_Q = 0.5003270373238773

/** Stage 1: the high shelf modelling the acoustic effect of the head. */
export function preFilter(sampleRate: number): Biquad {
  const k = Math.tan((Math.PI * SHELF_F0) / sampleRate)
  const vh = 10 ** (SHELF_GAIN_DB / 20)
  const vb = vh ** SHELF_VB_EXPONENT
  const a0 = 1 + k / SHELF_Q + k * k
  return {
    b0: (vh + (vb * k) / SHELF_Q + k * k) / a0,
    b1: (2 * (k * k - vh)) / a0,
    b2: (vh - (vb * k) / SHELF_Q + k * k) / a0,
    a1: (2 * (k * k - 1)) / a0,
    a2: (1 - k / SHELF_Q + k * k) / a0,
  }
}

/**
 * Stage 2: the revised low-frequency B-curve high-pass. Its numerator is left
 * unnormalised (1, −2, 1) exactly as the Recommendation's table prints it; the
 * −0.691 dB constant of the loudness formula accounts for the resulting gain.
 */
export function rlbHighPass(sampleRate: number): Biquad {
  const k = Math.tan((Math.PI * HIGHPASS_F0) / sampleRate)
  const a0 = 1 + k / HIGHPASS_Q + k * k
  return {
    b0: 1,
    b1: -2,
    b2: 1,
    a1: (2 * (k * k - 1)) / a0,
    a2: (1 - k / HIGHPASS_Q + k * k) / a0,
  }
}

/** Magnitude response of a biquad at frequency hz, used by tests and for sanity checks. */
export function biquadGain(f: Biquad, hz: number, sampleRate: number): number {
  const w = (2 * Math.PI * hz) / sampleRate
  const re = (c0: number, c1: number, c2: number) => c0 + c1 * Math.cos(w) + c2 * Math.cos(2 * w)
  const im = (c1: number, c2: number) => -(c1 * Math.sin(w) + c2 * Math.sin(2 * w))
  const nr = re(f.b0, f.b1, f.b2)
  const ni = im(f.b1, f.b2)
  const dr = re(1, f.a1, f.a2)
  const di = im(f.a1, f.a2)
  return Math.sqrt((nr * nr + ni * ni) / (dr * dr + di * di))
}
