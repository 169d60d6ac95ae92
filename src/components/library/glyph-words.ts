// The glyph's geometry and its words, apart from the drawing so they can be
// tested: where a frequency sits on the glyph's log axis, where the hum comb's
// ticks go, and the sentence a screen reader (and the tooltip) gives.
import type { Take, TakeGlyph } from '@shared/schemas/takes'

/** Harmonics of the mains comb marked on the glyph (the analysis compares the first eight). */
const COMB = 8

/** Vertical position 0 (top) .. 100 (bottom) of a frequency on the glyph's log-frequency axis. */
export function yOf(g: TakeGlyph, hz: number): number {
  const n = g.bands.length
  if (n < 2) return 50
  const step = Math.log(g.bands[n - 1] / g.bands[0]) / (n - 1)
  const low = Math.log(g.bands[0]) - step / 2
  const span = step * n
  return 100 * (1 - (Math.log(hz) - low) / span)
}

/** y positions of the hum comb's harmonics that fall inside the glyph. */
export function humTicks(g: TakeGlyph): number[] {
  if (!g.humHz) return []
  const ys: number[] = []
  for (let k = 1; k <= COMB; k++) {
    const y = yOf(g, k * g.humHz)
    if (y >= 0 && y <= 100) ys.push(Math.round(y * 10) / 10)
  }
  return ys
}

export function kiloHz(hz: number): string {
  return hz >= 1000 ? `${(hz / 1000).toFixed(1)} kHz` : `${Math.round(hz)} Hz`
}

/** What the glyph shows, in words. */
export function glyphWords(take: Pick<Take, 'glyph' | 'status'>): string {
  const g = take.glyph
  if (!g) {
    if (take.status === 'queued' || take.status === 'analyzing') return 'Spectrum comes once the take is measured'
    if (take.status === 'failed') return 'No spectrum: the take could not be measured'
    return 'No spectrum yet: measured before spectrum glyphs; measure again to draw it'
  }
  const hum = g.humHz ? `${g.humHz} Hz hum comb` : 'no mains hum'
  const whine = g.whineHz ? `whine near ${kiloHz(g.whineHz)}` : 'no steady whine'
  return `Spectrum over time: ${hum}, ${whine}`
}
