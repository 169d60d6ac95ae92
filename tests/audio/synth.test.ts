// Test/demo signal generators: deterministic, right length and level, and the spectral
// shape each one promises. Levels and frequency are cross-checked with `sox FILE -n stat`
// (Debian sox: "Maximum amplitude", "RMS amplitude", "Rough frequency").
import { afterAll, describe, expect, it } from 'vitest'
import { spawnSync } from 'node:child_process'
import {
  dataBursts,
  mainsHum,
  motorSweep,
  pinkNoise,
  roomTone,
  sine,
  switchingWhine,
  whiteNoise,
} from '../../server/audio/synth'
import { writeWav } from '../../server/audio/wav-writer'
import { makeTmpDir } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())
const SR = 48000

async function soxStat(x: Float32Array): Promise<{ max: number; rms: number; freq: number }> {
  const p = tmp.file(`s${Math.random().toString(36).slice(2)}.wav`)
  await writeWav(p, [x], { sampleRate: SR, channels: 1, encoding: 'float', bitsPerSample: 32 })
  // sox prints the stat report on stderr.
  const r = spawnSync('sox', [p, '-n', 'stat'], { encoding: 'utf8' })
  if (r.status !== 0) throw new Error(`sox stat failed: ${r.stderr}`)
  const text = r.stderr
  const get = (label: string) => Number(new RegExp(`${label}:\\s+(-?[\\d.]+)`).exec(text)![1])
  return { max: get('Maximum amplitude'), rms: get('RMS\\s+amplitude'), freq: get('Rough\\s+frequency') }
}

/** Power at one frequency (Goertzel), normalised by length. */
function power(x: Float32Array, hz: number): number {
  const w = (2 * Math.PI * hz) / SR
  const k = 2 * Math.cos(w)
  let s1 = 0,
    s2 = 0
  for (const v of x) {
    const s = v + k * s1 - s2
    s2 = s1
    s1 = s
  }
  return (s1 * s1 + s2 * s2 - k * s1 * s2) / (x.length * x.length)
}
const db = (p: number) => 10 * Math.log10(p)
const rms = (x: Float32Array) => Math.sqrt(x.reduce((s, v) => s + v * v, 0) / x.length)

describe('synth', () => {
  it('is deterministic: the same options give the same samples, another seed another noise', () => {
    expect(mainsHum({ hz: 60, seconds: 0.5, sampleRate: SR })).toEqual(
      mainsHum({ hz: 60, seconds: 0.5, sampleRate: SR }),
    )
    expect(pinkNoise({ seconds: 0.1, sampleRate: SR, seed: 1 })[0]).not.toEqual(
      pinkNoise({ seconds: 0.1, sampleRate: SR, seed: 2 })[0],
    )
    const st = whiteNoise({ seconds: 0.1, sampleRate: SR, channels: 2 })
    expect(st[0]).not.toEqual(st[1]) // independent noise per channel
  })

  it('lengths and channel counts follow seconds x rate', () => {
    for (const g of [
      sine({ hz: 1000, seconds: 0.25, sampleRate: 44100, channels: 3 }),
      dataBursts({ seconds: 0.25, sampleRate: 44100, channels: 3 }),
      roomTone({ seconds: 0.25, sampleRate: 44100, channels: 3 }),
    ]) {
      expect(g.map((c) => c.length)).toEqual([11025, 11025, 11025])
    }
  })

  it('sine: peak level and frequency as sox stat measures them', async () => {
    const s = await soxStat(sine({ hz: 1000, seconds: 1, sampleRate: SR, levelDbfs: -6 })[0])
    expect(s.max).toBeCloseTo(10 ** (-6 / 20), 3)
    expect(s.rms).toBeCloseTo(10 ** (-6 / 20) / Math.SQRT2, 3)
    expect(Math.abs(s.freq - 1000)).toBeLessThan(5)
  })

  it('white and pink noise: RMS level as sox stat measures it; pink falls about 3 dB per octave', async () => {
    expect((await soxStat(whiteNoise({ seconds: 1, sampleRate: SR, levelDbfs: -20 })[0])).rms).toBeCloseTo(0.1, 3)
    const pink = pinkNoise({ seconds: 4, sampleRate: SR, levelDbfs: -20 })[0]
    expect((await soxStat(pink)).rms).toBeCloseTo(0.1, 3)
    // Average power in bands around 250 Hz and 4 kHz (4 octaves apart): about 12 dB apart.
    const band = (f: number) => [0.9, 0.95, 1, 1.05, 1.1].reduce((s, m) => s + power(pink, f * m), 0) / 5
    const slope = (db(band(250)) - db(band(4000))) / 4
    expect(slope).toBeGreaterThan(2)
    expect(slope).toBeLessThan(4)
  })

  it('mains hum: energy at the fundamental and harmonics, far above the bands between them', () => {
    for (const hz of [50, 60] as const) {
      const x = mainsHum({ hz, seconds: 2, sampleRate: SR, levelDbfs: -12 })[0]
      expect(Math.max(...x.map(Math.abs))).toBeCloseTo(10 ** (-12 / 20), 4)
      for (const k of [1, 2, 3]) expect(db(power(x, k * hz)) - db(power(x, k * hz + hz / 2))).toBeGreaterThan(20)
      expect(power(x, 3 * hz)).toBeGreaterThan(power(x, 2 * hz)) // odd harmonics stronger
    }
  })

  it('switching whine: carrier on its frequency with sidebands at ± the modulation rate', () => {
    const x = switchingWhine({ hz: 15000, sidebandHz: 100, seconds: 1, sampleRate: SR })[0]
    const c = db(power(x, 15000))
    expect(c - db(power(x, 15100))).toBeGreaterThan(20) // faint sideband
    expect(db(power(x, 15100)) - db(power(x, 15050))).toBeGreaterThan(20) // but present
  })

  it('motor sweep rises in pitch; data bursts are gated (quiet between bursts)', async () => {
    const m = motorSweep({ seconds: 2, sampleRate: SR, fromHz: 40, toHz: 400 })[0]
    const first = await soxStat(m.subarray(0, SR / 4))
    const last = await soxStat(m.subarray(m.length - SR / 4))
    expect(last.freq).toBeGreaterThan(first.freq * 4)
    const b = dataBursts({ seconds: 1, sampleRate: SR, burstsPerSecond: 4, duty: 0.25 })[0]
    const period = SR / 4
    expect(db(rms(b.subarray(0, period / 4)) / rms(b.subarray(period / 2, period)))).toBeGreaterThan(15)
  })

  it('room tone: quiet, at its RMS level within 1 dB, with a little hum', () => {
    const x = roomTone({ seconds: 2, sampleRate: SR, levelDbfs: -60, humHz: 50 })[0]
    expect(20 * Math.log10(rms(x))).toBeCloseTo(-60, 0)
    expect(db(power(x, 50)) - db(power(x, 75))).toBeGreaterThan(10)
  })
})
