// Spectral features on signals sox generates: the signal's own definition
// (sox synth frequency and level) is the reference for tonal peaks and hum.
// Centroid of white noise: half the Nyquist frequency, as follows from the
// definition of the spectral centroid for a flat spectrum.
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { sox } from '../helpers/reference-tools'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-spectrum-'))
afterAll(() => rmSync(dir, { recursive: true, force: true }))

/** sox-made mono take: the given synth tones (Hz, dBFS crest) mixed with white noise at noiseDb. */
function take(name: string, rate: number, tones: [number, number][], noiseDb: number, seconds = 20): string {
  const parts = tones.map(([hz, db], i) => {
    const p = join(dir, `${name}-t${i}.wav`)
    sox([
      '-n',
      '-r',
      String(rate),
      '-b',
      '24',
      '-c',
      '1',
      p,
      'synth',
      String(seconds),
      'sine',
      String(hz),
      'vol',
      `${db}dB`,
    ])
    return p
  })
  const noise = join(dir, `${name}-n.wav`)
  sox([
    '-n',
    '-r',
    String(rate),
    '-b',
    '24',
    '-c',
    '1',
    noise,
    'synth',
    String(seconds),
    'whitenoise',
    'vol',
    `${noiseDb}dB`,
  ])
  if (parts.length === 0) return noise
  const out = join(dir, `${name}.wav`)
  // -m mixes; -v 1 before each input keeps its level (sox would otherwise scale by 1/inputs).
  sox(['-m', ...[...parts, noise].flatMap((p) => ['-v', '1', p]), out])
  return out
}

describe('tonal peaks', () => {
  it('find a 1 kHz sine at −20 dBFS in noise, at its frequency and level (±0.5 Hz, ±0.3 dB)', async () => {
    const { spectrum } = (await analyzeFile(take('tone', 48000, [[1000, -20]], -50))).analysis
    expect(spectrum.tonalPeaks.length).toBeGreaterThanOrEqual(1)
    const [top] = spectrum.tonalPeaks
    expect(Math.abs(top.hz - 1000)).toBeLessThan(0.5)
    expect(Math.abs(top.db + 20)).toBeLessThan(0.3)
  })

  it('list several tones strongest first, at 44.1 kHz, off the FFT bin grid', async () => {
    const tones: [number, number][] = [
      [330.3, -18],
      [2471.7, -24],
      [7919.1, -30],
    ]
    const { spectrum } = (await analyzeFile(take('tones', 44100, tones, -70, 10))).analysis
    expect(spectrum.tonalPeaks.length).toBeGreaterThanOrEqual(3)
    tones.forEach(([hz, db], i) => {
      expect(Math.abs(spectrum.tonalPeaks[i].hz - hz)).toBeLessThan(0.5)
      expect(Math.abs(spectrum.tonalPeaks[i].db - db)).toBeLessThan(0.3)
    })
  })

  it('are absent from white noise, whose centroid is a quarter of the sample rate (±3 %)', async () => {
    const { spectrum } = (await analyzeFile(take('white', 48000, [], -20, 10))).analysis
    expect(spectrum.tonalPeaks).toEqual([])
    expect(spectrum.centroidHz).not.toBeNull()
    expect(Math.abs(spectrum.centroidHz! / 12000 - 1)).toBeLessThan(0.03)
  })
})

describe('mains hum', () => {
  it('is 50 Hz for a 50 Hz fundamental with odd harmonics in noise', async () => {
    const file = take(
      'hum50',
      48000,
      [
        [50, -30],
        [150, -40],
        [250, -46],
      ],
      -50,
    )
    const { mainsHum } = (await analyzeFile(file)).analysis.spectrum
    expect(mainsHum.hz).toBe(50)
    expect(mainsHum.ratioDb!).toBeGreaterThan(6)
  })

  it('is 60 Hz for 60 Hz and 120 Hz components at 96 kHz', async () => {
    const file = take(
      'hum60',
      96000,
      [
        [60, -36],
        [120, -42],
      ],
      -55,
      12,
    )
    const { mainsHum } = (await analyzeFile(file)).analysis.spectrum
    expect(mainsHum.hz).toBe(60)
    expect(mainsHum.ratioDb!).toBeGreaterThan(6)
  })

  it('is null for a clean high whine whose quantisation spurs fall on mains harmonics', async () => {
    // 7.8 kHz at 44.1 kHz repeats every 147 samples, so undithered 24-bit rounding
    // (sox -D) leaves spurs at multiples of 300 Hz: the 6th harmonic of 50 and the
    // 5th of 60. They stand far above their neighbours yet carry no audible energy.
    const file = join(dir, 'whine.wav')
    sox(['-D', '-n', '-r', '44100', '-b', '24', '-c', '1', file, 'synth', '10', 'sine', '7800', 'vol', '-24dB'])
    const { mainsHum } = (await analyzeFile(file)).analysis.spectrum
    expect(mainsHum.hz).toBeNull()
  })

  it('is null for plain noise, with a ratio near 0 dB', async () => {
    const { mainsHum } = (await analyzeFile(take('nohum', 48000, [], -30, 10))).analysis.spectrum
    expect(mainsHum.hz).toBeNull()
    expect(mainsHum.ratioDb).not.toBeNull()
    expect(Math.abs(mainsHum.ratioDb!)).toBeLessThan(1)
  })
})
