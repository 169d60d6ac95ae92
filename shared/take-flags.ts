// What is wrong with a take, in words: the flags shown wherever takes are
// listed (logging sheet, library, listening bench) and counted in the one-line
// summary after a batch upload. One pure function, so every list says the same.
//
// The analysis is read defensively: the measurement schema grows additively
// (the longest clipped run, a high-accuracy true peak), and older takes lack
// those fields. Unknown shapes give no flag rather than a wrong one.

/** The delivery ceiling a true peak must stay under (EBU R 128 practice: −1 dBTP). */
export const CEILING_DBTP = -1
/** The absolute gate of ITU-R BS.1770-4: blocks below −70 LUFS do not count, so quieter takes have no integrated loudness. */
export const GATE_LUFS = -70

export type TakeFlagKind = 'clipped' | 'over-ceiling' | 'too-quiet'

export interface TakeFlag {
  kind: TakeFlagKind
  /** Short words for the flag ("Clipped"). */
  label: string
  /** What it measures, in words ("0.4 % clipped, longest 12 ms"). */
  detail: string
}

/** The parts of a take the flags read; `Take` from shared/schemas/takes fits. */
export interface FlaggableTake {
  status?: string
  format: { frames?: number; channels?: number; sampleRate?: number } | null
  analysis: unknown
}

type Rec = Record<string, unknown>
const isRec = (v: unknown): v is Rec => typeof v === 'object' && v !== null && !Array.isArray(v)
const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null)
const minus = (s: string) => s.replace('-', '\u2212')

/** "0.4 %", "< 0.1 %", "12 %". */
export function formatShare(fraction: number): string {
  const pct = fraction * 100
  if (pct > 0 && pct < 0.1) return '< 0.1 %'
  return `${pct >= 10 ? pct.toFixed(0) : pct.toFixed(1)} %`
}

/** "12 ms", "1.3 s". */
export function formatRun(seconds: number): string {
  return seconds < 1 ? `${Math.max(1, Math.round(seconds * 1000))} ms` : `${seconds.toFixed(1)} s`
}

interface Clipping {
  share: number
  longestSeconds: number | null
}

/**
 * Clipping from the per-channel counts of samples in flat full-scale runs
 * (`levels.channels[].clippedSamples`) and the longest such run
 * (`longestClipSamples`, absent from analyses stored before it was measured).
 */
function clippingOf(analysis: Rec, format: FlaggableTake['format']): Clipping | null {
  const frames = num(format?.frames)
  const channels = num(format?.channels)
  const rate = num(format?.sampleRate)
  const total = frames && channels ? frames * channels : null
  const levels = isRec(analysis.levels) ? analysis.levels : {}
  const perChannel = Array.isArray(levels.channels) ? levels.channels.filter(isRec) : []
  if (!total || !perChannel.length) return null
  const count = perChannel.reduce((a, c) => a + (num(c.clippedSamples) ?? 0), 0)
  if (count <= 0) return null
  const runs = perChannel.map((c) => num(c.longestClipSamples)).filter((r): r is number => r !== null)
  const longestSeconds = runs.length && rate ? Math.max(...runs) / rate : null
  return { share: count / total, longestSeconds }
}

/**
 * The take's true peak: the BS.1770-4 Annex 2 figure (`levels.truePeakDbtp`), the one every list
 * shows, so the flag's words repeat the number beside it. The high-accuracy figure beside it assumes
 * silence around the take (an abrupt start reads higher) and is a different quantity.
 */
function truePeakOf(analysis: Rec): number | null {
  const levels = isRec(analysis.levels) ? analysis.levels : null
  return levels ? num(levels.truePeakDbtp) : null
}

/** Every flag of one take, in a fixed order (clipped, over the ceiling, too quiet). Unmeasured takes have none. */
export function takeFlags(take: FlaggableTake): TakeFlag[] {
  if (!isRec(take.analysis)) return []
  const a = take.analysis
  const flags: TakeFlag[] = []

  const clip = clippingOf(a, take.format)
  if (clip) {
    const run = clip.longestSeconds !== null ? `, longest ${formatRun(clip.longestSeconds)}` : ''
    flags.push({ kind: 'clipped', label: 'Clipped', detail: `${formatShare(clip.share)} clipped${run}` })
  }

  const tp = truePeakOf(a)
  if (tp !== null && tp > CEILING_DBTP) {
    flags.push({
      kind: 'over-ceiling',
      label: 'Over the ceiling',
      detail: `true peak ${minus(tp.toFixed(1))} dBTP, above the ${minus(String(CEILING_DBTP))} dBTP ceiling`,
    })
  }

  const loudness = isRec(a.loudness) ? a.loudness : null
  if (loudness && 'integratedLufs' in loudness) {
    const lufs = num(loudness.integratedLufs)
    if (lufs === null || lufs < GATE_LUFS) {
      flags.push({
        kind: 'too-quiet',
        label: 'Too quiet to measure',
        detail: `below the ${minus(String(GATE_LUFS))} LUFS gate`,
      })
    }
  }
  return flags
}

/**
 * The one line after a batch upload: "12 of 12 measured · 1 clipped · 1 too quiet · 2 refused".
 * `takes` are the uploads the server accepted; `refused` the files it turned away.
 */
export function batchSummary(takes: FlaggableTake[], refused: number): string {
  const measured = takes.filter((t) => t.status === 'ready').length
  const failed = takes.filter((t) => t.status === 'failed').length
  const count = (kind: TakeFlagKind) => takes.filter((t) => takeFlags(t).some((f) => f.kind === kind)).length
  const parts = [`${measured} of ${takes.length} measured`]
  if (failed) parts.push(`${failed} could not be measured`)
  const clipped = count('clipped')
  const over = count('over-ceiling')
  const quiet = count('too-quiet')
  if (clipped) parts.push(`${clipped} clipped`)
  if (over) parts.push(`${over} over the ceiling`)
  if (quiet) parts.push(`${quiet} too quiet`)
  if (refused) parts.push(`${refused} refused`)
  return parts.join(' \u00b7 ')
}
