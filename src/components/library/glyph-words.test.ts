import { describe, expect, it } from 'vitest'
import type { TakeGlyph } from '@shared/schemas/takes'
import { glyphWords, humTicks, yOf } from './glyph-words'

// Centres of 20 bands log-spaced from 40 Hz to 20 kHz, as server/audio/glyph.ts makes them at 48 kHz.
const bands = Array.from({ length: 20 }, (_, i) => 40 * 500 ** ((i + 0.5) / 20))
const glyph = (o: Partial<TakeGlyph> = {}): TakeGlyph => ({
  bands,
  columns: 48,
  levels: new Array(48 * 20).fill(0),
  humHz: null,
  whineHz: null,
  ...o,
})

describe('glyph words and geometry', () => {
  it('puts the band edges at the bottom and top and a band centre in its row', () => {
    expect(yOf(glyph(), 40)).toBeCloseTo(100, 6)
    expect(yOf(glyph(), 20000)).toBeCloseTo(0, 6)
    expect(yOf(glyph(), bands[0])).toBeCloseTo(97.5, 6)
  })

  it('marks eight comb harmonics, low ones lower on the glyph', () => {
    const ys = humTicks(glyph({ humHz: 50 }))
    expect(ys).toHaveLength(8)
    for (let i = 1; i < ys.length; i++) expect(ys[i]).toBeLessThan(ys[i - 1])
    expect(humTicks(glyph())).toEqual([])
  })

  it('names the hum and the whine, or their absence, and why a take has no glyph', () => {
    expect(glyphWords({ status: 'ready', glyph: glyph({ humHz: 50, whineHz: 9210 }) })).toBe(
      'Spectrum over time: 50 Hz hum comb, whine near 9.2 kHz',
    )
    expect(glyphWords({ status: 'ready', glyph: glyph() })).toBe('Spectrum over time: no mains hum, no steady whine')
    expect(glyphWords({ status: 'ready', glyph: null })).toMatch(/measure again/)
    expect(glyphWords({ status: 'analyzing', glyph: null })).toMatch(/once the take is measured/)
  })
})
