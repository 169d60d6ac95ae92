// The library row's glyph: a small spectrogram of the whole take (48 time
// slices × 20 log-spaced bands), with the mains-hum comb and the loudest whine
// named beside it, so a row says what an electromagnetic take holds (a hum
// comb, a whine line, bursts) where a waveform would only say "loud, quiet".
//
// It rides on the measuring pass (analyze.ts pushes the same blocks) and costs
// a few short FFTs per slice whatever the take's length: 48 × 3 windows of
// about 85 ms, placed up front from the frame count, like the spectrum meter's
// segments. A slice is the mean power of its three windows, so a burst between
// them can be missed; the glyph is a picture, not a measurement. The hum and
// the whine are not found again here: they come from the analysis's averaged
// spectrum, which is the figure the library filters on.
import { RealFft } from './real-fft'
import type { Spectrum } from '@shared/schemas/analysis'
import type { TakeGlyph } from '@shared/schemas/takes'
import { meanOfChannels } from './mix-down'

export const GLYPH_COLUMNS = 48
export const GLYPH_BANDS = 20
const WINDOWS_PER_COLUMN = 3
const LOW_HZ = 40
const HIGH_HZ = 20_000
/** Levels cover this many dB below the loudest cell; quieter cells are 0. */
export const GLYPH_RANGE_DB = 60
/** Below this a steady tone is hum's business, not a whine. */
const WHINE_FROM_HZ = 1000

interface Window {
  start: number
  filled: number
  column: number
  buffer: Float64Array
}

/** Band centres (Hz) and, per band, the FFT bins it sums (an empty band borrows its nearest bin). */
export function glyphBands(sampleRate: number, fftSize: number) {
  const high = Math.min(HIGH_HZ, 0.95 * (sampleRate / 2))
  const edge = (i: number) => LOW_HZ * (high / LOW_HZ) ** (i / GLYPH_BANDS)
  const binHz = sampleRate / fftSize
  const centres: number[] = []
  const bins: { from: number; to: number; weight: number }[] = []
  for (let b = 0; b < GLYPH_BANDS; b++) {
    const lo = edge(b)
    const hi = edge(b + 1)
    centres.push(Math.round(Math.sqrt(lo * hi) * 10) / 10)
    const from = Math.ceil(lo / binHz)
    const to = Math.ceil(hi / binHz) - 1
    if (to >= from) bins.push({ from, to, weight: 1 })
    else {
      // Narrower than a bin (the lowest bands): the power density at its centre times its width.
      const k = Math.round(Math.sqrt(lo * hi) / binHz)
      bins.push({ from: k, to: k, weight: (hi - lo) / binHz })
    }
  }
  return { centres, bins }
}

export class GlyphMeter {
  private readonly size: number
  private readonly length: number
  private readonly channels: number
  private readonly starts: { start: number; column: number }[] = []
  private next = 0
  private position = 0
  private readonly active: Window[] = []
  private readonly spare: Float64Array[] = []
  private readonly fft: RealFft
  private readonly window: Float64Array
  private readonly bands: ReturnType<typeof glyphBands>
  /** Summed band power per cell, and how many windows each column got. */
  private readonly cells = new Float64Array(GLYPH_COLUMNS * GLYPH_BANDS)
  private readonly counts = new Uint16Array(GLYPH_COLUMNS)

  constructor(sampleRate: number, channels: number, frames: number) {
    // About 85 ms: 12 Hz bins at 48 kHz, short enough that a slice of a short take still has its own.
    this.size = 2 ** Math.ceil(Math.log2(sampleRate / 12))
    this.length = Math.max(1, Math.min(this.size, frames))
    this.channels = channels
    this.fft = new RealFft(this.size)
    this.bands = glyphBands(sampleRate, this.size)
    this.window = new Float64Array(this.length)
    for (let i = 0; i < this.length; i++)
      this.window[i] = this.length > 1 ? 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / (this.length - 1)) : 1
    const last = Math.max(0, frames - this.length)
    for (let c = 0; c < GLYPH_COLUMNS; c++) {
      for (let w = 0; w < WINDOWS_PER_COLUMN; w++) {
        const centre = ((c + (w + 0.5) / WINDOWS_PER_COLUMN) * frames) / GLYPH_COLUMNS
        const start = Math.min(last, Math.max(0, Math.round(centre - this.length / 2)))
        this.starts.push({ start, column: c })
      }
    }
    this.starts.sort((a, b) => a.start - b.start)
  }

  push(planar: Float32Array[]): void {
    const n = planar[0]?.length ?? 0
    const end = this.position + n
    while (this.next < this.starts.length && this.starts[this.next].start < end) {
      const s = this.starts[this.next++]
      this.active.push({ ...s, filled: 0, buffer: this.spare.pop() ?? new Float64Array(this.size) })
    }
    for (let a = this.active.length - 1; a >= 0; a--) {
      const w = this.active[a]
      const from = Math.max(0, w.start + w.filled - this.position)
      const to = Math.min(n, w.start + this.length - this.position)
      meanOfChannels(w.buffer, w.filled, planar, from, to)
      w.filled += Math.max(0, to - from)
      if (w.filled >= this.length) {
        this.accumulate(w)
        this.active.splice(a, 1)
        this.spare.push(w.buffer)
      }
    }
    this.position = end
  }

  private accumulate(w: Window): void {
    const b = w.buffer
    const len = w.filled
    let mean = 0
    for (let i = 0; i < len; i++) mean += b[i]
    mean /= len
    for (let i = 0; i < len; i++) b[i] = (b[i] - mean) * this.window[i]
    b.fill(0, len)
    this.fft.input.set(b)
    const o = this.fft.transform()
    const half = this.size / 2
    const row = w.column * GLYPH_BANDS
    this.bands.bins.forEach((band, i) => {
      let p = 0
      for (let k = band.from; k <= Math.min(band.to, half); k++) p += o[2 * k] * o[2 * k] + o[2 * k + 1] * o[2 * k + 1]
      this.cells[row + i] += p * band.weight
    })
    this.counts[w.column]++
  }

  /** The glyph, given the analysis's spectrum (for the hum and whine it names). */
  finish(spectrum: Spectrum): TakeGlyph {
    // A take shorter than announced: windows started but never filled are used as far as they got.
    for (const w of this.active.splice(0)) if (w.filled > 1) this.accumulate(w)
    const db = new Float64Array(this.cells.length).fill(-Infinity)
    let top = -Infinity
    for (let c = 0; c < GLYPH_COLUMNS; c++) {
      if (this.counts[c] === 0) continue
      for (let i = 0; i < GLYPH_BANDS; i++) {
        const p = this.cells[c * GLYPH_BANDS + i] / this.counts[c]
        const v = p > 0 ? 10 * Math.log10(p) : -Infinity
        db[c * GLYPH_BANDS + i] = v
        if (v > top) top = v
      }
    }
    const levels = Array.from(db, (v) =>
      Number.isFinite(v) && Number.isFinite(top)
        ? Math.round(255 * Math.min(1, Math.max(0, (v - top + GLYPH_RANGE_DB) / GLYPH_RANGE_DB)))
        : 0,
    )
    return {
      bands: this.bands.centres,
      columns: GLYPH_COLUMNS,
      levels,
      humHz: spectrum.mainsHum.hz,
      whineHz: whineOf(spectrum, this.bands.centres[GLYPH_BANDS - 1]),
    }
  }
}

/** The strongest tonal peak from 1 kHz up to the glyph's top band (tonal peaks come strongest first). */
function whineOf(spectrum: Spectrum, topHz: number): number | null {
  const peak = spectrum.tonalPeaks.find((p) => p.hz >= WHINE_FROM_HZ && p.hz <= topHz * 1.2)
  return peak ? Math.round(peak.hz) : null
}
