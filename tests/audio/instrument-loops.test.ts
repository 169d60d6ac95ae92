// Finding seamless loops, checked on mains hum with harmonics and noise built
// from its definition (instrument-signals.ts): the loop length is a whole number
// of periods, the join's step is no larger than the material's own steps, and
// the pack render of the proposal, cycled 8 times, shows no click at the joins.
import path from 'node:path'
import { writeFileSync } from 'node:fs'
import { afterAll, describe, expect, it } from 'vitest'
import { encodeWav } from '../../server/audio/wav-writer'
import { prng } from '../../server/audio/synth'
import { findLoops, findPeriod, stepQuantile } from '../../server/instrument/loops'
import { decode, mono, render, tempDir } from '../render/render-fixtures'
import { humWithHarmonics } from './instrument-signals'
import { rmSync } from 'node:fs'

const dir = tempDir('instrument-loops')
afterAll(() => rmSync(dir, { recursive: true, force: true }))

/** 0.05 ms, the limit for "a whole number of periods". */
const PERIOD_TOLERANCE_SECONDS = 0.00005

const hums: { name: string; sampleRate: number; hz: number }[] = [
  { name: '50 Hz at 48 kHz', sampleRate: 48000, hz: 50 },
  { name: '50 Hz at 44.1 kHz', sampleRate: 44100, hz: 50 },
  {
    name: '50.02 Hz at 48 kHz (a grid running fast: the period is not a whole number of frames)',
    sampleRate: 48000,
    hz: 50.02,
  },
  { name: '60 Hz at 96 kHz', sampleRate: 96000, hz: 60 },
  { name: 'a motor-like drone at 23.7 Hz, 44.1 kHz (same harmonics)', sampleRate: 44100, hz: 23.7 },
]

/** Distance of `seconds` from the nearest whole number of periods. */
const offWholePeriods = (seconds: number, hz: number) => Math.abs(seconds * hz - Math.round(seconds * hz)) / hz

/**
 * The click detector: the high-pass-filtered difference (second difference, y[i] − 2y[i−1] + y[i−2])
 * of the loop cycled `times` times; its largest value within ±2 frames of each join against its
 * largest value inside the loop away from the joins (the material's own level).
 */
function joinSpike(loop: Float32Array, times: number): { atJoins: number; material: number } {
  const n = loop.length
  const y = new Float32Array(n * times)
  for (let k = 0; k < times; k++) y.set(loop, k * n)
  const hp = (i: number) => Math.abs(y[i] - 2 * y[i - 1] + y[i - 2])
  let atJoins = 0
  let material = 0
  for (let i = 2; i < y.length; i++) {
    const fromJoin = Math.min(i % n, n - (i % n))
    if (i >= n - 2 && fromJoin <= 2) atJoins = Math.max(atJoins, hp(i))
    else if (fromJoin > 4) material = Math.max(material, hp(i))
  }
  return { atJoins, material }
}

describe('loop finding on mains hum with harmonics and noise', () => {
  it.each(hums)('$name: the period is found', ({ sampleRate, hz }) => {
    const x = humWithHarmonics(3, sampleRate, 3, hz as 50)
    const period = findPeriod(x, sampleRate)
    expect(period).not.toBeNull()
    expect(Math.abs(period! / sampleRate - 1 / hz)).toBeLessThan(PERIOD_TOLERANCE_SECONDS / 10)
  })

  it.each(hums)(
    '$name: whole periods within 0.05 ms, a join step within the 99th-percentile step',
    ({ sampleRate, hz }) => {
      const x = humWithHarmonics(4, sampleRate, 3, hz as 50)
      const loops = findLoops(x, {
        sampleRate,
        approxLength: Math.round(1.5 * sampleRate),
        minLength: Math.round(0.05 * sampleRate),
      })
      expect(loops.length).toBeGreaterThan(0)
      const p99 = stepQuantile(x, 0.99)
      for (const l of loops) {
        const seconds = (l.end - l.start) / sampleRate
        expect(offWholePeriods(seconds, hz)).toBeLessThanOrEqual(PERIOD_TOLERANCE_SECONDS)
        expect(Math.abs(seconds - 1.5)).toBeLessThan(2.5 / hz) // near the length asked for
        expect(Math.abs(x[l.end - 1] - x[l.start])).toBeLessThanOrEqual(p99)
        expect(l.crossfadeMs).toBe(0)
        expect(l.score).toBeGreaterThan(0.5)
      }
    },
  )

  it.each(hums)(
    '$name: the pack render of the best loop, cycled 8 times, shows no click at the joins',
    async ({ name, sampleRate, hz }) => {
      const x = humWithHarmonics(4, sampleRate, 5, hz as 50)
      const [best] = findLoops(x, { sampleRate, approxLength: sampleRate, minLength: Math.round(0.05 * sampleRate) })
      const source = path.join(dir, `${name.replace(/\W+/g, '-')}.wav`)
      writeFileSync(source, encodeWav([x], { sampleRate, channels: 1, encoding: 'pcm', bitsPerSample: 24 }))
      const out = path.join(dir, `loop-${path.basename(source)}`)
      const r = await render(source, out, {
        kind: 'loop',
        start: best.start / sampleRate,
        end: best.end / sampleRate,
        settings: { bitDepth: 24 },
      })
      // Proposed on rising crossings: the render keeps the points exactly.
      expect([r.sourceStartFrame, r.sourceEndFrame]).toEqual([best.start, best.end])
      const rendered = mono(decode(out, 1))
      const { atJoins, material } = joinSpike(rendered, 8)
      expect(atJoins).toBeLessThanOrEqual(material)

      // The detector does see a click: the same render cut a quarter period longer.
      const quarter = Math.round(sampleRate / hz / 4)
      const off = joinSpike(rendered.subarray(0, rendered.length - quarter), 8)
      expect(off.atJoins).toBeGreaterThan(2 * off.material)
    },
  )
})

describe('loop finding on material without a period', () => {
  it('keeps near the length asked and offers a crossfade when no clean join exists', () => {
    const sampleRate = 48000
    const r = prng(21)
    const x = new Float32Array(3 * sampleRate)
    for (let i = 0; i < x.length; i++) x[i] = 0.3 * (2 * r() - 1) // broadband crackle: white noise
    expect(findPeriod(x, sampleRate)).toBeNull()
    const loops = findLoops(x, { sampleRate, approxLength: sampleRate, minLength: 2400 })
    expect(loops.length).toBeGreaterThan(0)
    for (const l of loops) {
      expect(Math.abs((l.end - l.start) / sampleRate - 1)).toBeLessThanOrEqual(0.05)
      expect(x[l.start - 1] < 0 && x[l.start] >= 0).toBe(true) // a rising crossing, as renders cut
      expect(l.crossfadeMs).toBeGreaterThan(0)
      expect(l.score).toBeLessThan(0.5)
    }
  })

  it('proposes nothing when the range is shorter than the shortest loop', () => {
    expect(findLoops(new Float32Array(1000), { sampleRate: 48000, minLength: 2400 })).toEqual([])
  })
})
