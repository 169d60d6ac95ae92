// The field strip's arithmetic, kept free of Vue and the DOM so it can be
// tested on its own: the ruler's ticks and labels, the spectrogram's frequency
// axis (the server's row mapping, server/audio/spectrogram.ts), and where an
// image rendered for one time range sits inside another.

export interface TimeRange {
  start: number
  end: number
}

export interface RulerTick {
  seconds: number
  label: string
}

/** Ruler units: sample positions below this visible span (the deep zoom). */
export const SAMPLE_RULER_BELOW_SECONDS = 0.25
const TIME_STEPS = [0.01, 0.02, 0.05, 0.1, 0.2, 0.5, 1, 2, 5, 10, 15, 30, 60, 120, 300, 600, 900, 1800, 3600]
const SAMPLE_STEPS = [1, 2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000]

/** m:ss (h:mm:ss on takes of an hour or more), with as many decimals as the step needs. */
export function rulerTime(seconds: number, step: number, long: boolean): string {
  const decimals = step >= 1 ? 0 : step >= 0.1 ? 1 : 2
  const unit = 10 ** decimals
  const total = Math.round(seconds * unit) / unit
  const h = Math.floor(total / 3600)
  const m = Math.floor((total % 3600) / 60)
  const s = total - h * 3600 - m * 60
  const ss = s.toFixed(decimals).padStart(decimals ? 3 + decimals : 2, '0')
  return long ? `${h}:${String(m).padStart(2, '0')}:${ss}` : `${h * 60 + m}:${ss}`
}

/** Sample positions grouped in threes with thin spaces: 48 000. */
export const samplePosition = (n: number) => String(Math.round(n)).replace(/\B(?=(\d{3})+(?!\d))/g, '\u2009')

/**
 * Labelled ticks for the visible range, at least `minGapPx` apart: times on
 * a normal zoom, sample positions (with "smp") on a deep one.
 */
export function rulerTicks(
  view: TimeRange,
  widthPx: number,
  duration: number,
  sampleRate: number,
  minGapPx = 72,
): { ticks: RulerTick[]; unit: 'time' | 'samples' } {
  const span = Math.max(1e-9, view.end - view.start)
  const perPx = span / Math.max(1, widthPx)
  if (span < SAMPLE_RULER_BELOW_SECONDS && sampleRate > 0) {
    const stepSamples =
      SAMPLE_STEPS.find((s) => s / sampleRate / perPx >= minGapPx) ?? SAMPLE_STEPS[SAMPLE_STEPS.length - 1]
    const first = Math.ceil((view.start * sampleRate) / stepSamples) * stepSamples
    const ticks: RulerTick[] = []
    for (let n = first; n / sampleRate <= view.end + 1e-9 && ticks.length < 200; n += stepSamples)
      ticks.push({ seconds: n / sampleRate, label: samplePosition(n) })
    return { ticks, unit: 'samples' }
  }
  const step = TIME_STEPS.find((s) => s / perPx >= minGapPx) ?? TIME_STEPS[TIME_STEPS.length - 1]
  const long = duration >= 3600
  const first = Math.ceil(view.start / step - 1e-9) * step
  const ticks: RulerTick[] = []
  for (let i = 0; first + i * step <= view.end + 1e-9 && i < 200; i++) {
    const t = first + i * step
    ticks.push({ seconds: t, label: rulerTime(t, step, long) })
  }
  return { ticks, unit: 'time' }
}

/** Parses a ruler label back to seconds (tests and the screen reader text use it). */
export function parseRulerTime(label: string): number {
  return label.split(':').reduce((acc, part) => acc * 60 + Number(part), 0)
}

// ---- frequency axis ----

export type FreqScale = 'log' | 'linear'
export interface FreqAxis {
  minHz: number
  maxHz: number
  scale: FreqScale
}

/** Height fraction from the bottom (0) to the top (1) of a frequency. */
export function freqFraction(hz: number, a: FreqAxis): number {
  if (a.scale === 'log') return Math.log(Math.max(hz, 1e-9) / a.minHz) / Math.log(a.maxHz / a.minHz)
  return (hz - a.minHz) / (a.maxHz - a.minHz)
}

/** The frequency at a height fraction (0 bottom, 1 top). */
export function freqAt(fraction: number, a: FreqAxis): number {
  const f = Math.min(1, Math.max(0, fraction))
  if (a.scale === 'log') return a.minHz * (a.maxHz / a.minHz) ** f
  return a.minHz + (a.maxHz - a.minHz) * f
}

/** "50 Hz", "500 Hz", "1 kHz", "2.5 kHz", "20 kHz". */
export function hzLabel(hz: number): string {
  if (hz < 1000) return `${Math.round(hz)} Hz`
  const k = hz / 1000
  return `${Number.isInteger(k) ? k : k.toFixed(1)} kHz`
}

/** Labelled frequencies for an axis `heightPx` tall, at least `minGapPx` apart. */
export function freqTicks(
  a: FreqAxis,
  heightPx: number,
  minGapPx = 16,
): { hz: number; fraction: number; label: string }[] {
  let candidates: number[]
  if (a.scale === 'log') {
    candidates = []
    for (let d = 1; d <= 100000; d *= 10) for (const m of [1, 2, 5]) candidates.push(m * d)
  } else {
    const step =
      [100, 200, 500, 1000, 2000, 5000, 10000].find((s) => (s / (a.maxHz - a.minHz)) * heightPx >= minGapPx * 1.5) ??
      10000
    candidates = []
    for (let f = Math.ceil(a.minHz / step) * step; f <= a.maxHz; f += step) candidates.push(f)
  }
  const out: { hz: number; fraction: number; label: string }[] = []
  let lastPx = -Infinity
  for (const hz of candidates.filter((f) => f >= a.minHz && f <= a.maxHz)) {
    const fraction = freqFraction(hz, a)
    const px = fraction * heightPx
    if (px - lastPx < minGapPx || heightPx - px < 6) continue
    out.push({ hz, fraction, label: hzLabel(hz) })
    lastPx = px
  }
  return out
}

// ---- images on the time axis ----

/** Left and width, in fractions of the visible range, of an image rendered for `image`. */
export function placeImage(image: TimeRange, view: TimeRange): { left: number; width: number } {
  const span = Math.max(1e-9, view.end - view.start)
  return { left: (image.start - view.start) / span, width: (image.end - image.start) / span }
}

/** The fraction of the visible range at a time, and back. */
export const fractionOf = (t: number, view: TimeRange) => (t - view.start) / Math.max(1e-9, view.end - view.start)
export const timeAt = (fraction: number, view: TimeRange) => view.start + fraction * (view.end - view.start)

/** Initials of a name, for a note's mark: "Dana Humbucker" → "DH". */
export function initials(name: string | null | undefined): string {
  const parts = (name ?? '').trim().split(/\s+/u).filter(Boolean)
  if (!parts.length) return '?'
  const first = [...parts[0]][0] ?? ''
  const last = parts.length > 1 ? ([...parts[parts.length - 1]][0] ?? '') : ''
  return (first + last).toUpperCase()
}

/**
 * The spectrogram's colour ramp from the floor (first) to 0 dBFS (last), as the
 * server draws it (SPECTROGRAM_COLOURS in server/audio/spectrogram.ts, which the
 * client cannot import); strip-math.test.ts holds the two equal.
 */
export const SPECTROGRAM_RAMP = ['#131518', '#3a2a22', '#8c4f26', '#c8773b', '#e0a56e', '#f6e7c8'] as const
