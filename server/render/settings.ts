// The gain an item's render settings ask for, worked out from the source range's
// measurement. (The settings themselves, the pack's with the item's override on top,
// are effectiveSettings in shared/schemas/packs.ts.) Types only from the schemas:
// this runs in the render worker, which does not load zod.
import type { RenderSettings } from '@shared/schemas/packs'

export interface SourceLevels {
  integratedLufs: number | null
  truePeakDbtp: number | null
  /** High-accuracy true peak, when measured (preferred for the ceiling). */
  preciseTruePeakDbtp?: number | null
  /** Short-sound loudness of a range under 400 ms: what loudness mode uses when there is no integrated loudness. */
  shortSoundLufs?: number | null
}

/** The loudness a loudness target is met on: integrated, or for a sound under 400 ms its short-sound loudness. */
export function targetLoudness(src: { integratedLufs: number | null; shortSoundLufs?: number | null }): number | null {
  return src.integratedLufs ?? src.shortSoundLufs ?? null
}

/** The true peak a ceiling is held to: the high-accuracy figure when there is one. */
export function ceilingPeak(src: { truePeakDbtp: number | null; preciseTruePeakDbtp?: number | null }): number | null {
  return src.preciseTruePeakDbtp ?? src.truePeakDbtp
}

export interface GainPlan {
  gainDb: number
  /** What the level mode asked for before the ceiling; null when the mode has no target. */
  wantedGainDb: number | null
  /** The mode actually used: loudness falls back to peak when the range has no loudness (silent; a range under 0.4 s uses its short-sound loudness). */
  mode: RenderSettings['normalize']
  /** The true-peak ceiling held the gain below what the mode asked for. */
  limited: boolean
}

/**
 * Gain only, no limiter: the mode's gain (loudness target − integrated, peak target − true peak,
 * or 0), lowered to (ceiling − true peak) when that is smaller. Digital silence gets 0 dB.
 */
export function planGain(src: SourceLevels, s: RenderSettings): GainPlan {
  const peak = ceilingPeak(src)
  if (peak === null || src.truePeakDbtp === null)
    return { gainDb: 0, wantedGainDb: null, mode: s.normalize, limited: false }
  let mode = s.normalize
  const loudness = targetLoudness(src)
  if (mode === 'loudness' && loudness === null) mode = 'peak'
  const wanted =
    mode === 'loudness' ? s.loudnessTargetLufs - loudness! : mode === 'peak' ? s.peakTargetDbtp - src.truePeakDbtp : 0
  const ceilingGain = s.truePeakCeilingDbtp - peak
  const limited = ceilingGain < wanted
  return { gainDb: limited ? ceilingGain : wanted, wantedGainDb: mode === 'none' ? null : wanted, mode, limited }
}

/** The level the mode aims at, in the unit it is measured in (LUFS for loudness, dBTP for peak). */
export function modeTarget(mode: RenderSettings['normalize'], s: RenderSettings): number | null {
  return mode === 'loudness' ? s.loudnessTargetLufs : mode === 'peak' ? s.peakTargetDbtp : null
}

export const round2 = (v: number | null): number | null => (v === null ? null : Math.round(v * 100) / 100)
