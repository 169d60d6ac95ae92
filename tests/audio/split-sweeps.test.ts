// The split detector against sweeps whose boundaries are known by construction
// (tests/audio/split-signals.ts): five to eight pieces of different
// electromagnetic-like sounds, joined with and without pauses. The tolerance
// (every true boundary within 100 ms, at most one false boundary a sweep) is
// this product's own requirement, not a published standard.
import { describe, expect, it } from 'vitest'
import { prng } from '../../server/audio/synth'
import { SplitFeatureTracker } from '../../server/instrument/split-features'
import { proposeSplits, type SplitSegmentFrames } from '../../server/instrument/split'
import { buildSweep, type Sweep } from './split-signals'

function detect(sw: Sweep, opts = { minSegmentSeconds: 2 }): SplitSegmentFrames[] {
  const t = new SplitFeatureTracker(sw.sampleRate, Math.round(sw.sampleRate / 100))
  // Fed in odd-sized blocks, as a file reader would hand them over.
  for (let i = 0; i < sw.samples.length; i += 40_000) t.push([sw.samples.subarray(i, i + 40_000)])
  return proposeSplits(t.finish(), opts)
}

/** Every edge of a proposed part except the take's own start and end. */
const edges = (segs: SplitSegmentFrames[], total: number) =>
  [...new Set(segs.flatMap((s) => [s.start, s.end]))].filter((p) => p > 0 && p < total)

function score(sw: Sweep, segs: SplitSegmentFrames[]) {
  const tol = 0.1 * sw.sampleRate
  const found = edges(segs, sw.samples.length)
  return {
    missed: sw.boundaries.filter((b) => !found.some((p) => Math.abs(p - b) <= tol)),
    falses: found.filter((p) => !sw.boundaries.some((b) => Math.abs(p - b) <= tol)),
  }
}

const cases = Array.from({ length: 10 }, (_, i) => {
  const seed = i + 1
  const count = 5 + (i % 4)
  // Three patterns of joins: every join bare, every join with a pause, and mixed.
  const pauses = Array.from({ length: count - 1 }, (_, j) => (i % 3 === 0 ? false : i % 3 === 1 ? true : j % 2 === 0))
  return { seed, count, pauses, rate: i % 2 ? 44100 : 48000 }
})

describe('split proposals over known sweeps', () => {
  it.each(cases)(
    'sweep $seed: $count pieces at $rate Hz: every boundary within 100 ms, at most one false one',
    ({ seed, count, pauses, rate }) => {
      const sw = buildSweep(seed, count, pauses, rate)
      const segs = detect(sw)
      const { missed, falses } = score(sw, segs)
      expect(
        missed.map((b) => b / rate),
        'boundaries missed (s)',
      ).toEqual([])
      expect(falses.length, `false boundaries at ${falses.map((p) => (p / rate).toFixed(2))} s`).toBeLessThanOrEqual(1)
      // Each join says why: a pause where one was left, a change where the pieces touch.
      for (const [j, p] of pauses.entries()) {
        const at = sw.pieces[j + 1][0]
        const seg = segs.find((s) => Math.abs(s.start - at) <= 0.1 * rate)
        expect(seg?.reason, `join ${j + 1}`).toBe(p ? 'pause' : 'change')
        expect(seg!.confidence).toBeGreaterThan(0)
        expect(seg!.confidence).toBeLessThanOrEqual(1)
      }
    },
  )

  it('proposes nothing for one device held under the coil (a single hum, a single crackle)', () => {
    for (const seed of [3, 4]) {
      const sw = buildSweep(seed, 1, [], 48000)
      expect(detect(sw)).toEqual([])
    }
  })

  it('keeps parts at least minSegmentSeconds long', () => {
    const sw = buildSweep(7, 8, Array(7).fill(false), 48000)
    for (const min of [2, 4.5]) {
      const segs = detect(sw, { minSegmentSeconds: min })
      for (const s of segs) expect(s.end - s.start).toBeGreaterThanOrEqual(min * 48000 - 48000 * 0.01)
    }
  })

  it('leaves out the silence before the first piece and after the last', () => {
    const sw = buildSweep(5, 5, [true, true, true, true], 48000)
    const r = prng(11)
    const lead = new Float32Array(48000 * 1.5).map(() => 1e-4 * (r() - 0.5))
    const samples = new Float32Array(lead.length * 2 + sw.samples.length)
    samples.set(lead, 0)
    samples.set(sw.samples, lead.length)
    samples.set(lead, lead.length + sw.samples.length)
    const segs = detect({ ...sw, samples })
    expect(segs[0].start / 48000).toBeCloseTo(1.5, 1)
    expect(segs.at(-1)!.end / 48000).toBeCloseTo(1.5 + sw.samples.length / 48000, 1)
  })
})
