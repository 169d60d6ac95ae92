// The mains-hum verdict (rule in server/audio/spectrum-features.ts). Sources:
// mains frequencies are 50 and 60 Hz (IEC 60038 standard voltages and
// frequencies); hum from transformers and rectified supplies carries the
// fundamental and its harmonics, odd ones strongest (common practice in
// electrical engineering, from memory). Signals are built here with known
// tones, so the expected verdict is known by construction.
import { describe, expect, it } from 'vitest'
import { measure, random } from '../helpers/signals'

const FS = 48000

function noise(seconds: number, dbfs: number, seed: number): Float32Array {
  const rnd = random(seed)
  const a = 10 ** (dbfs / 20) * Math.sqrt(3) // uniform noise of this RMS
  return Float32Array.from({ length: Math.round(seconds * FS) }, () => (rnd() * 2 - 1) * a)
}

/** Adds sines (hz, dBFS peak) to x between from and to seconds (whole take by default). */
function addTones(x: Float32Array, tones: [number, number][], from = 0, to = x.length / FS, sign = 1): Float32Array {
  for (let i = Math.round(from * FS); i < Math.round(to * FS); i++) {
    let s = 0
    for (const [hz, db] of tones) s += 10 ** (db / 20) * Math.sin((2 * Math.PI * hz * i) / FS)
    x[i] += sign * s
  }
  return x
}

const hum50: [number, number][] = [
  [50, -30],
  [150, -38],
  [250, -44],
]

describe('mains hum: a mains pattern, not any tone at a multiple of 50 or 60 Hz', () => {
  for (const hz of [100, 150, 300, 400]) {
    it(`a pure ${hz} Hz tone is not mains hum (one harmonic alone)`, () => {
      const x = addTones(noise(8, -60, hz), [[hz, -20]])
      const h = measure([x], { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum
      expect(h.hz).toBeNull()
      expect(h.confidence).toBe(0)
    })
  }

  it('50 Hz with odd harmonics is 50 Hz mains hum, its fundamental measured and its ladder reported', () => {
    const x = addTones(noise(8, -60, 1), [
      [49.9, -30],
      [149.7, -38],
      [249.5, -44],
    ])
    const h = measure([x], { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum
    expect(h.hz).toBe(50)
    expect(Math.abs(h.measuredHz! - 49.9)).toBeLessThan(0.1)
    expect(h.harmonics!.length).toBe(8)
    const up = h.harmonics!.filter((k) => k.standsOut).map((k) => k.n)
    expect(up).toEqual([1, 3, 5])
    expect(h.confidence!).toBeGreaterThanOrEqual(0.75)
    expect(h.share).toBe(1)
  })

  it('60 Hz hum is 60 Hz, not 50', () => {
    const x = addTones(noise(8, -60, 2), [
      [60, -32],
      [180, -40],
    ])
    expect(measure([x], { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum.hz).toBe(60)
  })
})

describe('mains hum in the side signal', () => {
  it('the same hum in antiphase on L and R (cancelled in the mix) is found, in the side signal L−R', () => {
    const l = addTones(noise(8, -60, 3), hum50)
    const r = addTones(noise(8, -60, 4), hum50, 0, 8, -1)
    const h = measure([l, r], { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum
    expect(h.hz).toBe(50)
    expect(h.signals).toEqual(['L', 'R', 'L−R'])
  })

  it('hum on one channel only is found in the mix, in that channel and in the side signal, not in the other channel', () => {
    const l = addTones(noise(8, -60, 7), hum50)
    const r = noise(8, -60, 8)
    const h = measure([l, r], { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum
    expect(h.hz).toBe(50)
    expect(h.signals).toEqual(['all channels', 'L', 'L−R'])
  })
})

describe('mains hum channel by channel', () => {
  // Four coils, the third 25 dB quieter than the others: hum on it (−75 dBFS) is drowned
  // in the mix of the four (the loud channels' noise dominates it) and stands only in its own.
  const quadWithHumOn = (humChannel: number | null) =>
    [-40, -40, -65, -40].map((db, ch) => {
      const x = noise(8, db, 20 + ch)
      return ch === humChannel
        ? addTones(x, [
            [50, -75],
            [150, -81],
            [250, -87],
          ])
        : x
    })

  it('hum on channel 3 of 4 only, too weak to stand in the mix, is found in channel 3', () => {
    const h = measure(quadWithHumOn(2), { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum
    expect(h.hz).toBe(50)
    expect(h.signals).toEqual(['ch 3'])
    expect(h.share).toBe(1)
  })

  it('the same four channels without hum: no verdict (the per-channel search does not invent hum in noise)', () => {
    const h = measure(quadWithHumOn(null), { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum
    expect(h.hz).toBeNull()
    expect(h.signals).toEqual([])
    expect(h.share).toBeNull()
  })

  it('hum in antiphase on L and R of a 4-channel take is found in L, R and L−R, not in the mix', () => {
    const [l, r, c3, c4] = quadWithHumOn(null)
    addTones(l, hum50)
    addTones(r, hum50, 0, 8, -1)
    const h = measure([l, r, c3, c4], { sampleRate: FS, channelMask: 0 }).spectrum.mainsHum
    expect(h.hz).toBe(50)
    expect(h.signals).toEqual(['L', 'R', 'L−R'])
  })
})

describe('where in the take the hum is', () => {
  it('hum in 10 s of a 60 s take (20–30 s) is reported with its share (about 17 %) and its times', () => {
    const l = addTones(noise(60, -60, 5), hum50, 20, 30)
    const r = addTones(noise(60, -60, 6), hum50, 20, 30)
    const h = measure([l, r], { sampleRate: FS, channelMask: 0 }, 65536).spectrum.mainsHum
    expect(h.hz).toBe(50)
    // Segments are 1.37 s long (65536 frames) with 50 % overlap: the edges are known to about ±1.4 s.
    expect(h.share!).toBeGreaterThan(0.14)
    expect(h.share!).toBeLessThan(0.22)
    expect(h.spans!.length).toBe(1)
    expect(Math.abs(h.spans![0].startSeconds - 20)).toBeLessThan(1.5)
    expect(Math.abs(h.spans![0].endSeconds - 30)).toBeLessThan(1.5)
  })
})
