// Character suggestions against labelled synthetic families built from each
// character's definition (tests/audio/character-signals.ts; DEVELOPERS.md,
// "Character suggestions"). The definitions are this product's own (common
// practice in the trade's vocabulary, no published standard names them), so the
// check is that the engine recovers the label it was built from.
import { describe, expect, it } from 'vitest'
import { CHARACTER_TAGS, SUGGEST_FROM } from '@shared/schemas/character'
import { characterOf, member, SOUND_FAMILIES, soundMember } from './character-signals'

const PER_CLASS = 30

describe('character suggestions', () => {
  it('suggests the right tag for ≥ 90 % of suggestions over 30 varied members of each class', () => {
    const table: Record<string, Record<string, number>> = {}
    let right = 0
    let suggested = 0
    let topRight = 0
    for (const tag of CHARACTER_TAGS) {
      table[tag] = Object.fromEntries([...CHARACTER_TAGS, 'none'].map((t) => [t, 0]))
      for (let seed = 1; seed <= PER_CLASS; seed++) {
        const { character } = characterOf(member(tag, seed))
        const suggestions = character.tags.filter((t) => t.confidence >= SUGGEST_FROM)
        const top = suggestions[0]?.tag ?? 'none'
        table[tag][top]++
        if (top === tag) topRight++
        suggested += suggestions.length
        right += suggestions.filter((s) => s.tag === tag).length
      }
    }
    console.log('Confusion (rows: the class a signal was built as; columns: the strongest suggestion)')
    console.table(table)
    console.log(
      `suggestions right: ${right}/${suggested}; strongest right: ${topRight}/${PER_CLASS * CHARACTER_TAGS.length}`,
    )
    expect(right / suggested).toBeGreaterThanOrEqual(0.9)
    // And the suggestions are not right by being rare: most members get their own tag first.
    expect(topRight / (PER_CLASS * CHARACTER_TAGS.length)).toBeGreaterThanOrEqual(0.9)
  }, 600_000)

  it('reads the parameters it was built with: whine frequency and burst rate', () => {
    // A 2.5 kHz tone with a little noise: the steady tone within 0.5 %.
    const n = 32000 * 3
    const tone = new Float32Array(n)
    for (let i = 0; i < n; i++) tone[i] = 0.3 * Math.sin((2 * Math.PI * 2500 * i) / 32000) + 0.003 * Math.sin(i * 7.1)
    const whine = characterOf(tone).character
    expect(whine.whineHz!).toBeGreaterThan(2500 * 0.995)
    expect(whine.whineHz!).toBeLessThan(2500 * 1.005)
    expect(whine.whineStability).toBeGreaterThan(0.9)
    // Bursts of 20 ms every 125 ms (8 Hz): the rate within 5 %.
    const bursts = new Float32Array(n)
    for (let i = 0; i < n; i++) bursts[i] = i % 4000 < 640 ? 0.5 * Math.sin((2 * Math.PI * 1000 * i) / 32000) : 0
    const b = characterOf(bursts).character
    expect(b.burstRateHz!).toBeGreaterThan(8 * 0.95)
    expect(b.burstRateHz!).toBeLessThan(8 * 1.05)
    expect(b.tags[0].tag).toBe('burst train')
  })

  it('exports one family per kind of sound for the sounds-like check', () => {
    expect(Object.keys(SOUND_FAMILIES).length).toBeGreaterThanOrEqual(7)
    expect(soundMember('hum', 1).length).toBeGreaterThan(0)
  })
})
