// Bad and unusual samples, and the noise floor. Sources: IEEE 754 (NaN and
// infinities are not sample values; float WAV samples may exceed ±1.0 without
// clipping: WAVE_FORMAT_IEEE_FLOAT has no limit of its own), sox (the
// signals), and the noise-floor definition written in the contributor guide
// ("Measurement definitions"), common practice for a recordist's meter.
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { WavWriter } from '../../server/audio/wav-writer'
import { measure, random, sine } from '../helpers/signals'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-bad-'))
afterAll(() => rmSync(dir, { recursive: true, force: true }))

const FS = 48000

function noise(seconds: number, dbfs: number, seed: number, dc = 0): Float32Array {
  const rnd = random(seed)
  const a = 10 ** (dbfs / 20) * Math.sqrt(3)
  return Float32Array.from({ length: Math.round(seconds * FS) }, () => (rnd() * 2 - 1) * a + dc)
}

describe('NaN and infinite samples are counted, placed in time and left out of every measurement', () => {
  it('three bad samples in a float take do not void loudness, RMS or spectrum', () => {
    const clean = sine(FS, 20, 1000, -23)
    const bad = clean.slice()
    bad[Math.round(12.4 * FS)] = NaN
    bad[Math.round(12.4 * FS) + 3] = Infinity
    bad[Math.round(15.05 * FS)] = -Infinity
    const want = measure([clean, clean.slice()], { sampleRate: FS, channelMask: 0, encoding: 'float' })
    const got = measure([bad, clean.slice()], { sampleRate: FS, channelMask: 0, encoding: 'float' })
    expect(got.levels.invalidSamples).toEqual({ count: 3, times: [12.4, 15] })
    expect(got.levels.channels[0].invalidSamples).toBe(3)
    expect(got.levels.channels[1].invalidSamples).toBe(0)
    expect(Math.abs(got.loudness.integratedLufs! - want.loudness.integratedLufs!)).toBeLessThan(0.01)
    expect(got.loudness.loudnessRangeLu).not.toBeNull()
    expect(Math.abs(got.levels.rmsDbfs! - want.levels.rmsDbfs!)).toBeLessThan(0.01)
    expect(got.levels.samplePeakDbfs).toBeCloseTo(want.levels.samplePeakDbfs!, 6)
    expect(got.spectrum.tonalPeaks[0].hz).toBeCloseTo(1000, 0)
  })
})

describe('float samples above full scale are "over full scale", not clipped', () => {
  it('an unclipped sine peaking at +6 dBFS: no clipped samples, its over-full-scale count and peak', () => {
    const x = sine(FS, 2, 997, 6)
    const l = measure([x], { sampleRate: FS, channelMask: 0, encoding: 'float' }).levels
    expect(l.channels[0].clippedSamples).toBe(0)
    // |sin| > 10^(−6/20) for 2/3 of the time (arcsin(0.501) ≈ π/6 on each side of every zero).
    const over = l.channels[0].overFullScaleSamples!
    expect(Math.abs(over / x.length - 2 / 3)).toBeLessThan(0.01)
    expect(Math.abs(l.samplePeakDbfs! - 6)).toBeLessThan(0.01)
  })
})

describe('noise floor: DC removed, per channel, dead channels flagged, none on a take that never falls quiet', () => {
  it('a −80 dBFS floor with a DC offset of 1 % reads −80 dBFS, not the offset', () => {
    const x = noise(6, -80, 1, 0.01)
    x.set(
      sine(FS, 2, 440, -10).map((v) => v + 0.01),
      2 * FS,
    ) // something loud, so the floor is a quiet passage
    const r = measure([x], { sampleRate: FS, channelMask: 0, encoding: 'float' })
    expect(Math.abs(r.noiseFloorDbfs! - -80)).toBeLessThan(0.5)
    expect(r.noiseFloor!.continuous).toBe(false)
  })

  it('one dead channel is flagged and does not pull the floor down', () => {
    const live = noise(6, -70, 2)
    live.set(sine(FS, 2, 440, -10), 2 * FS)
    const dead = new Float32Array(live.length)
    const r = measure([live, dead], { sampleRate: FS, channelMask: 0, encoding: 'float' })
    expect(r.levels.channels[1].silent).toBe(true)
    expect(r.levels.channels[0].silent).toBe(false)
    expect(Math.abs(r.noiseFloorDbfs! - -70)).toBeLessThan(0.5)
  })

  it('a continuous drone has no noise floor: "continuous, no quiet passage"', () => {
    const x = sine(FS, 10, 120, -20)
    const r = measure([x, x.slice()], { sampleRate: FS, channelMask: 0, encoding: 'float' })
    expect(r.noiseFloorDbfs).toBeNull()
    expect(r.noiseFloor).toEqual({ dbfs: null, continuous: true })
  })
})

describe('float-64 files beyond the float-32 range are measured, not voided', () => {
  it('a 1 kHz sine of amplitude 1e40 in a float-64 WAV: +800 dBFS peak, 797.0 LUFS, over full scale, nothing invalid', async () => {
    const file = join(dir, 'f64-1e40.wav')
    const n = 48000 * 2
    const x = Float64Array.from({ length: n }, (_, i) => 1e40 * Math.sin((2 * Math.PI * 1000 * i) / 48000))
    const w = await WavWriter.open(file, {
      sampleRate: 48000,
      channels: 1,
      encoding: 'float',
      bitsPerSample: 64,
      channelMask: 0,
    })
    await w.write([x])
    await w.close()
    const { analysis } = await analyzeFile(file)
    expect(analysis.levels.invalidSamples?.count).toBe(0)
    expect(Math.abs(analysis.levels.samplePeakDbfs! - 800)).toBeLessThan(0.01)
    expect(Math.abs(analysis.levels.rmsDbfs! - (800 - 3.0103))).toBeLessThan(0.01)
    // A mono 1 kHz sine reads 20·log10(A) − 3.01 LUFS (BS.1770-4; EBU Tech 3341 case 1 with one channel).
    expect(Math.abs(analysis.loudness.integratedLufs! - (800 - 3.01))).toBeLessThan(0.1)
    expect(analysis.levels.channels[0].clippedSamples).toBe(0)
    expect(analysis.levels.channels[0].overFullScaleSamples!).toBeGreaterThan(n * 0.9)
  })
})
