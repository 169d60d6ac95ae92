// Slicing one-shots at onsets, checked against the known onset times of
// synthetic burst trains and clicks (built in instrument-signals.ts from their
// definitions) and against Debian's aubio-tools (`aubioonset`, its default
// "hfc" detector), run on the same files.
import { execFileSync } from 'node:child_process'
import { writeFileSync } from 'node:fs'
import { afterAll, describe, expect, it } from 'vitest'
import { encodeWav } from '../../server/audio/wav-writer'
import { detectOnsets, hopFrames, hopPeaks, precedingCrossing } from '../../server/instrument/onsets'
import { makeTmpDir } from '../helpers/audio-files'
import { burstTrain, clickTrain, fMeasure, type KnownEvents } from './instrument-signals'

const tmp = makeTmpDir('strayfield-onsets-')
afterAll(() => tmp.cleanup())

/** MIREX onset evaluation window (common practice), as the issue asks. */
const TOLERANCE = 0.02

/** aubioonset (Debian aubio-tools) on a 24-bit WAV of the signal: onset times in seconds. */
function aubioOnsets(sig: KnownEvents, name: string): number[] {
  const file = tmp.file(`${name}.wav`)
  writeFileSync(
    file,
    encodeWav([sig.samples], { sampleRate: sig.sampleRate, channels: 1, encoding: 'pcm', bitsPerSample: 24 }),
  )
  const out = execFileSync('aubioonset', ['-i', file], { encoding: 'utf8' })
  return out
    .split('\n')
    .filter((l) => l.trim() !== '')
    .map(Number)
}

const cases: [string, KnownEvents][] = [
  ['noise, tone and data bursts at 48 kHz', burstTrain(10, 48000)],
  ['noise, tone and data bursts at 44.1 kHz (other seed)', burstTrain(10, 44100, 11)],
  ['clicks from −26 to −6 dBFS at 44.1 kHz', clickTrain(10, 44100)],
  ['clicks at 96 kHz (other seed)', clickTrain(6, 96000, 12)],
]

describe('onset slicing', () => {
  it.each(cases)('%s: F-measure ≥ 0.9 within ±20 ms of the known onsets', (name, sig) => {
    const slices = detectOnsets(sig.samples, { sampleRate: sig.sampleRate })
    const found = slices.map((s) => s.start / sig.sampleRate)
    const score = fMeasure(sig.onsets, found, TOLERANCE)
    expect(score.f, `${name}: ${found.length} found, ${sig.onsets.length} known`).toBeGreaterThanOrEqual(0.9)
  })

  it.each(cases)(
    '%s: every onset found is one aubioonset also finds, and aubioonset finds the known ones',
    (name, sig) => {
      const reference = aubioOnsets(sig, name.replace(/\W+/g, '-'))
      // The reference tool sees the known onsets in these signals (its own recall), so they are real onsets.
      expect(fMeasure(sig.onsets, reference, TOLERANCE).recall).toBeGreaterThanOrEqual(0.9)
      const found = detectOnsets(sig.samples, { sampleRate: sig.sampleRate }).map((s) => s.start / sig.sampleRate)
      // Our onsets against aubio's: what we report, aubio reports too (aubio also splits some bursts, so no recall asked).
      expect(fMeasure(reference, found, TOLERANCE).precision).toBeGreaterThanOrEqual(0.9)
    },
  )

  it('starts each slice on a zero crossing at or before the onset, ends it before the next, and reports its peak', () => {
    const sig = burstTrain(6, 48000, 5)
    const x = sig.samples
    const slices = detectOnsets(x, { sampleRate: sig.sampleRate })
    expect(slices.length).toBe(sig.onsets.length)
    slices.forEach((s, k) => {
      const known = Math.round(sig.onsets[k] * sig.sampleRate)
      expect(s.start).toBeLessThanOrEqual(known + Math.round(0.002 * sig.sampleRate))
      expect(s.start).toBeGreaterThanOrEqual(known - Math.round(0.011 * sig.sampleRate))
      expect(x[s.start - 1] < 0 !== x[s.start] < 0).toBe(true)
      expect(s.end).toBeGreaterThan(s.start)
      if (k + 1 < slices.length) expect(s.end).toBeLessThanOrEqual(slices[k + 1].start)
      let peak = 0
      for (let i = s.start; i < s.end; i++) peak = Math.max(peak, Math.abs(x[i]))
      // Per-millisecond peaks: at least the slice's own, never more than the loudest millisecond it touches.
      expect(s.peak).toBeGreaterThanOrEqual(peak)
      expect(20 * Math.log10(s.peak) - 20 * Math.log10(peak)).toBeLessThan(1)
    })
  })

  it('ends a slice where the sound decays, long before the next onset', () => {
    const sig = burstTrain(4, 48000, 7)
    const slices = detectOnsets(sig.samples, { sampleRate: sig.sampleRate })
    // The tone bursts are 60 ms long (gated), the next event at least 180 ms later.
    const tone = slices[1]
    const seconds = (tone.end - tone.start) / sig.sampleRate
    expect(seconds).toBeGreaterThan(0.055)
    expect(seconds).toBeLessThan(0.1)
  })

  it('finds nothing in steady hum and noise, and lower sensitivity finds no more than higher', () => {
    const quiet = clickTrain(3, 48000, 9)
    const background = quiet.samples.slice(0, Math.round(0.29 * 48000)) // before the first click
    expect(detectOnsets(background, { sampleRate: 48000 })).toEqual([])
    const low = detectOnsets(quiet.samples, { sampleRate: 48000, sensitivity: 0 }).length
    const high = detectOnsets(quiet.samples, { sampleRate: 48000, sensitivity: 1 }).length
    expect(low).toBeLessThanOrEqual(high)
  })

  it('finds onsets on stereo channels of opposite polarity (their mean is silent) from the channels’ peaks', () => {
    const sig = burstTrain(4, 48000, 13)
    const left = sig.samples
    const right = left.map((v) => -v)
    const mean = new Float32Array(left.length) // (left + right) / 2: nothing
    const peaks = hopPeaks([left, right], hopFrames(48000))
    const slices = detectOnsets(mean, { sampleRate: 48000, peaks })
    expect(
      fMeasure(
        sig.onsets,
        slices.map((s) => s.start / 48000),
        TOLERANCE,
      ).f,
    ).toBeGreaterThanOrEqual(0.9)
  })

  it('moves back to the preceding crossing, a near rising one first', () => {
    const x = Float32Array.from([0.5, -0.2, -0.1, 0.3, 0.4, -0.1, -0.2, -0.9])
    expect(precedingCrossing(x, 7, 10)).toBe(5) // the nearest crossing (falling)
    expect(precedingCrossing(x, 7, 10, 4)).toBe(3) // a rising one within 4 frames is preferred
    expect(precedingCrossing(x, 7, 1)).toBe(7) // none within the window: the onset itself
  })
})
