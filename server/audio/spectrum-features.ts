// Features of the averaged power spectrum: centroid, tonal peaks, mains hum.
//
// Levels are in dB relative to a full-scale sine: a sine of amplitude 1 reads
// 0 dB whatever its frequency, because a tone's level is taken from the power
// of its whole Hann main lobe (±2 bins) rather than from one bin, which would
// read up to 1.4 dB low between bins.
import type { MainsHum, Spectrum, TonalPeak } from '@shared/schemas/analysis'
import type { PowerSpectrum } from './spectrum'

const PEAK_PROMINENCE_DB = 10
// Below this a "tone" is a rounding artefact of the sample format (24-bit quantisation spurs sit
// around −150 dB); reporting it would only hide real tones.
const TONAL_PEAK_FLOOR_DB = -140
const MAX_TONAL_PEAKS = 8
const FLOOR_HALF_WIDTH_HZ = 50
const LOBE = 2
const HUM_THRESHOLD_DB = 6
const HUM_HARMONICS = 10

export function describeSpectrum(s: PowerSpectrum | null): Spectrum {
  if (s === null) return { centroidHz: null, tonalPeaks: [], mainsHum: { hz: null, ratioDb: null } }
  return { centroidHz: centroid(s), tonalPeaks: tonalPeaks(s), mainsHum: mainsHum(s) }
}

function binHz(s: PowerSpectrum): number {
  return s.sampleRate / s.fftSize
}

function centroid(s: PowerSpectrum): number | null {
  let num = 0
  let den = 0
  for (let k = 1; k < s.power.length; k++) {
    num += k * s.power[k]
    den += s.power[k]
  }
  return den > 0 ? (num / den) * binHz(s) : null
}

/** Level in dB re full-scale sine of the power in bins [from..to]. */
export function bandLevelDb(s: PowerSpectrum, from: number, to: number): number {
  let p = 0
  for (let k = Math.max(0, from); k <= Math.min(s.power.length - 1, to); k++) p += s.power[k]
  return 10 * Math.log10((4 * p) / (s.fftSize * s.windowEnergy))
}

function median(values: Float64Array): number {
  values.sort()
  const m = values.length >> 1
  return values.length % 2 ? values[m] : (values[m - 1] + values[m]) / 2
}

/**
 * Local maxima (above both neighbours, not below the next ones) standing
 * ≥ 10 dB above the median of the spectrum within ±50 Hz, at least −140 dB,
 * strongest first.
 */
function tonalPeaks(s: PowerSpectrum): TonalPeak[] {
  const p = s.power
  const half = Math.max(LOBE * 4, Math.round(FLOOR_HALF_WIDTH_HZ / binHz(s)))
  const ratio = 10 ** (PEAK_PROMINENCE_DB / 10)
  const found: TonalPeak[] = []
  for (let k = LOBE; k < p.length - LOBE; k++) {
    const v = p[k]
    if (!(v > 0) || v <= p[k - 1] || v <= p[k + 1] || v < p[k - 2] || v < p[k + 2]) continue
    const floor = median(p.slice(Math.max(1, k - half), Math.min(p.length, k + half + 1)))
    if (v < ratio * floor) continue
    const db = bandLevelDb(s, k - LOBE, k + LOBE)
    if (db >= TONAL_PEAK_FLOOR_DB) found.push({ hz: refinedHz(s, k), db })
  }
  return found.sort((a, b) => b.db - a.db).slice(0, MAX_TONAL_PEAKS)
}

// Parabolic interpolation of the log power around the peak bin.
function refinedHz(s: PowerSpectrum, k: number): number {
  const a = Math.log(s.power[k - 1] || Number.MIN_VALUE)
  const b = Math.log(s.power[k])
  const c = Math.log(s.power[k + 1] || Number.MIN_VALUE)
  const d = a - 2 * b + c
  const delta = d < 0 ? (0.5 * (a - c)) / d : 0
  return (k + delta) * binHz(s)
}

/**
 * Mains hum: for 50 and 60 Hz, the power in narrow bands at the fundamental
 * and its harmonics (up to the 10th, below Nyquist) against the power the
 * neighbouring bands would put there. A band's half-width grows with the
 * harmonic number to follow a mains frequency that is off by up to 0.5 %.
 */
function mainsHum(s: PowerSpectrum): MainsHum {
  let total = 0
  for (let k = 1; k < s.power.length; k++) total += s.power[k]
  const candidates = ([50, 60] as const).map((f0) => ({ hz: f0, ...humBands(s, f0) }))
  const measured = candidates.filter((c): c is { hz: 50 | 60; ratioDb: number; inBand: number } => c.ratioDb !== null)
  if (measured.length === 0) return { hz: null, ratioDb: null }
  const best = measured.reduce((a, b) => (b.ratioDb > a.ratioDb ? b : a))
  // A hum must also carry a share of the take's energy: in a clean high whine the
  // hum bands hold only quantisation noise, whose ratio to its neighbours is chance.
  const audible = total > 0 && best.inBand / total >= HUM_MIN_SHARE
  return { hz: best.ratioDb >= HUM_THRESHOLD_DB && audible ? best.hz : null, ratioDb: best.ratioDb }
}

/** Hum bands must hold at least this share of the total power (−70 dB; common practice, chosen here). */
const HUM_MIN_SHARE = 1e-7

function humBands(s: PowerSpectrum, f0: number): { ratioDb: number | null; inBand: number } {
  const hz = binHz(s)
  const nyquist = s.sampleRate / 2
  let inBand = 0
  let expected = 0
  for (let h = 1; h <= HUM_HARMONICS; h++) {
    const f = h * f0
    const halfWidth = 1.5 * hz + 0.005 * f
    if (f + 5 * halfWidth >= nyquist) break
    const lo = Math.ceil((f - halfWidth) / hz)
    const hi = Math.floor((f + halfWidth) / hz)
    let band = 0
    for (let k = lo; k <= hi; k++) band += s.power[k]
    let side = 0
    let sideBins = 0
    for (const [a, b] of [
      [f - 5 * halfWidth, f - 2 * halfWidth],
      [f + 2 * halfWidth, f + 5 * halfWidth],
    ]) {
      for (let k = Math.max(1, Math.ceil(a / hz)); k <= Math.floor(b / hz); k++) {
        side += s.power[k]
        sideBins++
      }
    }
    inBand += band
    if (sideBins > 0) expected += (side / sideBins) * (hi - lo + 1)
  }
  if (!(inBand > 0) || !(expected > 0)) return { ratioDb: null, inBand }
  return { ratioDb: 10 * Math.log10(inBand / expected), inBand }
}
