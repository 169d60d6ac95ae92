// The field strip's arithmetic: ruler labels, the frequency axis against the
// server's own row mapping, and image placement on the visible range.
import { describe, expect, it } from 'vitest'
import { SPECTROGRAM_COLOURS, rowBandHz } from '../../../server/audio/spectrogram'
import {
  SPECTROGRAM_RAMP,
  freqAt,
  freqFraction,
  freqTicks,
  initials,
  parseRulerTime,
  placeImage,
  rulerTicks,
  rulerTime,
} from './strip-math'

describe('ruler', () => {
  it('labels m:ss, h:mm:ss on takes of an hour or more, and decimals only when the step needs them', () => {
    expect(rulerTime(62.5, 0.5, false)).toBe('1:02.5')
    expect(rulerTime(62, 1, false)).toBe('1:02')
    expect(rulerTime(3723, 60, true)).toBe('1:02:03')
    expect(rulerTime(0.05, 0.01, false)).toBe('0:00.05')
    expect(parseRulerTime('1:02.5')).toBeCloseTo(62.5)
    expect(parseRulerTime('1:02:03')).toBe(3723)
  })

  it('spaces labels at least the gap apart and keeps them inside the visible range', () => {
    const { ticks, unit } = rulerTicks({ start: 10, end: 40 }, 1000, 600, 48000)
    expect(unit).toBe('time')
    expect(ticks.length).toBeGreaterThan(3)
    for (const t of ticks) expect(t.seconds).toBeGreaterThanOrEqual(10)
    for (const t of ticks) expect(t.seconds).toBeLessThanOrEqual(40)
    const gaps = ticks.slice(1).map((t, i) => ((t.seconds - ticks[i].seconds) / 30) * 1000)
    expect(Math.min(...gaps)).toBeGreaterThanOrEqual(72)
    for (const t of ticks) expect(parseRulerTime(t.label)).toBeCloseTo(t.seconds, 6)
  })

  it('switches to sample positions on a deep zoom', () => {
    const { ticks, unit } = rulerTicks({ start: 1, end: 1.02 }, 1000, 60, 48000)
    expect(unit).toBe('samples')
    expect(ticks[0].label.replace(/\u2009/g, '')).toBe(String(Math.round(ticks[0].seconds * 48000)))
    expect(ticks[0].seconds).toBeGreaterThanOrEqual(1)
  })
})

describe('frequency axis', () => {
  const axis = { minHz: 20, maxHz: 24000, scale: 'log' as const }

  it('puts each frequency in the row the server renders it in (server/audio/spectrogram.ts rowBandHz)', () => {
    const height = 256
    for (const hz of [50, 1000, 9000, 20000]) {
      const row = Math.floor(freqFraction(hz, axis) * height)
      const [lo, hi] = rowBandHz(row, height, axis.minHz, axis.maxHz, 'log')
      expect(hz).toBeGreaterThanOrEqual(lo * 0.9999)
      expect(hz).toBeLessThan(hi * 1.0001)
    }
    expect(freqAt(freqFraction(9000, axis), axis)).toBeCloseTo(9000, 6)
  })

  it('labels Hz and kHz, bottom to top, never crowded', () => {
    const ticks = freqTicks(axis, 170)
    expect(ticks.map((t) => t.label)).toContain('1 kHz')
    expect(ticks.map((t) => t.label)).toContain('100 Hz')
    for (let i = 1; i < ticks.length; i++)
      expect((ticks[i].fraction - ticks[i - 1].fraction) * 170).toBeGreaterThanOrEqual(16)
  })
})

describe('placement and marks', () => {
  it('places an image rendered for one range inside the visible one', () => {
    expect(placeImage({ start: 0, end: 60 }, { start: 15, end: 30 })).toEqual({ left: -1, width: 4 })
    expect(placeImage({ start: 15, end: 30 }, { start: 15, end: 30 })).toEqual({ left: 0, width: 1 })
  })

  it('draws the legend with the server colour ramp', () => {
    expect([...SPECTROGRAM_RAMP]).toEqual([...SPECTROGRAM_COLOURS])
  })

  it('marks notes with the author initials', () => {
    expect(initials('Dana Humbucker')).toBe('DH')
    expect(initials('Cass')).toBe('C')
    expect(initials(null)).toBe('?')
  })
})
