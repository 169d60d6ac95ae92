// Features of the averaged power spectrum: centroid, tonal peaks, mains hum.
//
// Levels are in dB relative to a full-scale sine: a sine of amplitude 1 reads
// 0 dB whatever its frequency, because a tone's level is taken from the power
// of its whole Hann main lobe (±2 bins) rather than from one bin, which would
// read up to 1.4 dB low between bins.
import type { HumHarmonic, MainsHum, Spectrum, TonalPeak } from '@shared/schemas/analysis'
import type { PowerSpectrum } from './spectrum'

const PEAK_PROMINENCE_DB = 10
// Below this a "tone" is a rounding artefact of the sample format (24-bit quantisation spurs sit
// around −150 dB); reporting it would only hide real tones.
const TONAL_PEAK_FLOOR_DB = -140
const MAX_TONAL_PEAKS = 8
const FLOOR_HALF_WIDTH_HZ = 50
const LOBE = 2
const HUM_THRESHOLD_DB = 6

export function describeSpectrum(s: PowerSpectrum | null, hum?: MainsHum): Spectrum {
  if (s === null) return { centroidHz: null, tonalPeaks: [], mainsHum: hum ?? { hz: null, ratioDb: null } }
  const h = readHum(s)
  return { centroidHz: centroid(s), tonalPeaks: tonalPeaks(s), mainsHum: hum ?? { hz: h.hz, ratioDb: h.ratioDb } }
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

/** How many of p[from..to) satisfy ratio·p ≤ v (the product as the median test forms it). */
function countAtMost(p: Float64Array, from: number, to: number, v: number, ratio: number): number {
  let n = 0
  for (let j = from; j < to; j++) if (ratio * p[j] <= v) n++
  return n
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
    const from = Math.max(1, k - half)
    const to = Math.min(p.length, k + half + 1)
    // Most local maxima of a noisy spectrum are far from 10 dB up: when fewer than half the window's
    // bins are ≤ v / ratio, its median is above that and the peak fails; no copy or sort needed.
    if (countAtMost(p, from, to, v, ratio) < (to - from) >> 1) continue
    const floor = median(p.slice(from, to))
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
 * Mains hum. For 50 and 60 Hz: the fundamental is measured (the strongest bin within ±1 % of the
 * nominal frequency, refined), then narrow bands at the first eight harmonics of it are compared
 * with the power the neighbouring bands would put there. A band's half-width grows with the
 * harmonic number to follow a mains frequency that is off by up to 0.5 %. A harmonic stands out
 * when its band is ≥ 6 dB over its neighbours. It is a mains pattern when the fundamental stands
 * out, or when at least three of harmonics 2–8 do, one of them odd: a single tone at 100, 150, 300
 * or 400 Hz is one harmonic and is not mains hum, and a tone at 100 Hz with its own overtones
 * (harmonics 2, 4, 6, 8 of 50 Hz, all even) cannot be told from any 100 Hz sound, so it is not
 * called mains either. The hum bands together must also hold at least −70 dB of the signal's power
 * (in a clean high whine they hold only quantisation noise, whose ratio to its neighbours is chance).
 */
export interface HumReading {
  hz: 50 | 60 | null
  ratioDb: number | null
  measuredHz: number | null
  harmonics: HumHarmonic[]
  confidence: number
}

const HUM_HARMONICS = 8
/** Hum bands must hold at least this share of the total power (−70 dB; common practice, chosen here). */
const HUM_MIN_SHARE = 1e-7

/**
 * Σ power[k] for k ≥ 1. Its own function: readHum runs once per segment and signal, too rarely for V8
 * to optimise its body, and this loop, left unoptimised, boxed every partial sum (half a megabyte of
 * garbage per call on a 64k-point spectrum).
 */
function powerAbove0(power: Float64Array): number {
  let total = 0
  for (let k = 1; k < power.length; k++) total += power[k]
  return total
}

/** `thresholdDb`: how far a harmonic must stand out (6 dB on averaged spectra; one segment's spectrum is noisier, so its verdict asks for 10). */
export function readHum(s: PowerSpectrum, thresholdDb = HUM_THRESHOLD_DB): HumReading {
  const total = powerAbove0(s.power)
  const candidates = ([50, 60] as const).map((f0) => humCandidate(s, f0, total, thresholdDb))
  const mains = candidates.filter((c) => c.mains)
  const pick = (list: typeof candidates) =>
    list.reduce((a, b) =>
      score(b) > score(a) || (score(b) === score(a) && (b.ratioDb ?? -Infinity) > (a.ratioDb ?? -Infinity)) ? b : a,
    )
  const best = mains.length > 0 ? pick(mains) : pick(candidates)
  const verdict = best.mains ? best.f0 : null
  return {
    hz: verdict,
    ratioDb: best.ratioDb,
    measuredHz: verdict ? best.measuredHz : null,
    harmonics: best.harmonics,
    confidence: verdict ? confidence(best) : 0,
  }
}

interface Candidate {
  f0: 50 | 60
  measuredHz: number
  ratioDb: number | null
  harmonics: HumHarmonic[]
  mains: boolean
}

function score(c: Candidate): number {
  return c.harmonics.reduce((n, h) => n + (h.standsOut ? (h.n === 1 ? 2 : 1) : 0), 0)
}

/**
 * 0..1: the fundamental counts 2 and each other harmonic that stands out 1, out of 4; times how far
 * they stand out on average, out of 12 dB. A fundamental alone 12 dB up gives 0.5; a fundamental
 * and two harmonics that far up give 1.
 */
function confidence(c: Candidate): number {
  const up = c.harmonics.filter((h) => h.standsOut)
  if (up.length === 0) return 0
  const mean = up.reduce((a, h) => a + (h.aboveNeighboursDb ?? 0), 0) / up.length
  return Math.round(Math.min(1, score(c) / 4) * Math.min(1, mean / 12) * 100) / 100
}

function humCandidate(s: PowerSpectrum, f0: 50 | 60, total: number, thresholdDb: number): Candidate {
  const hz = binHz(s)
  const nyquist = s.sampleRate / 2
  // The measured fundamental: the strongest bin within ±1 %, refined; the nominal one if that is not a peak.
  let measuredHz: number = f0
  let bestK = -1
  for (
    let k = Math.max(2, Math.floor((f0 * 0.99) / hz));
    k <= Math.ceil((f0 * 1.01) / hz) && k < s.power.length - 1;
    k++
  ) {
    if (bestK < 0 || s.power[k] > s.power[bestK]) bestK = k
  }
  if (bestK > 0 && s.power[bestK] > s.power[bestK - 1] && s.power[bestK] >= s.power[bestK + 1])
    measuredHz = refinedHz(s, bestK)
  const harmonics: HumHarmonic[] = []
  let inBand = 0
  let expected = 0
  for (let h = 1; h <= HUM_HARMONICS; h++) {
    const f = h * measuredHz
    const halfWidth = 1.5 * hz + 0.005 * h * f0
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
    const exp = sideBins > 0 ? (side / sideBins) * (hi - lo + 1) : 0
    inBand += band
    expected += exp
    const db = band > 0 && exp > 0 ? 10 * Math.log10(band / exp) : null
    harmonics.push({ n: h, hz: Math.round(f * 100) / 100, aboveNeighboursDb: db, standsOut: false })
  }
  const ratioDb = inBand > 0 && expected > 0 ? 10 * Math.log10(inBand / expected) : null
  const audible = total > 0 && inBand / total >= HUM_MIN_SHARE
  for (const h of harmonics) h.standsOut = audible && h.aboveNeighboursDb !== null && h.aboveNeighboursDb >= thresholdDb
  const fundamental = harmonics[0]?.standsOut ?? false
  const others = harmonics.filter((h) => h.n > 1 && h.standsOut)
  const mains = fundamental || (others.length >= 3 && others.some((h) => h.n % 2 === 1))
  return { f0, measuredHz, ratioDb, harmonics, mains }
}
