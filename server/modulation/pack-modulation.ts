// A pack item's control curve, written beside its audio in a build. Runs inside the
// 'pack-build' task on its worker thread (the same computeModulation as a take's
// export), over the item's own range, so the curve lines up with the audio file.
import { MODULATION_LIMITS } from '@shared/schemas/modulation'
import type { ItemModulation, ManifestModulation } from '@shared/schemas/packs'
import { computeModulation } from './modulation-compute'
import type { ModulationFile } from './modulation-files'

/** Short marks between the item's name and the extension: `hum_01.env.wav`, `hum_01.cent.mid`. */
const MARKS = { envelope: 'env', centroid: 'cent', tone: 'tone' } as const
const EXTENSIONS = { csv: 'csv', wav: 'wav', midi: 'mid' } as const

/**
 * The curve's file name beside `outputName` (the audio's name without `.wav`): the part before the
 * extension keeps within the profile's name limit (the item's name is cut to make room), and a name
 * already in `taken` gets `_2`, `_3`… so no two entries of a zip collide.
 */
export function modulationFileName(
  outputName: string,
  m: Pick<ItemModulation, 'source' | 'format'>,
  maxNameLength: number | null,
  taken: Set<string>,
): string {
  const mark = `.${MARKS[m.source]}`
  const limit = maxNameLength ?? 80
  for (let n = 1; ; n++) {
    const suffix = (n > 1 ? `_${n}` : '') + mark
    const stem = outputName.slice(0, Math.max(1, limit - suffix.length)) + suffix
    const name = `${stem}.${EXTENSIONS[m.format]}`
    if (!taken.has(name.toLowerCase())) {
      taken.add(name.toLowerCase())
      return name
    }
  }
}

export interface ItemCurveInput {
  /** The take's audio on this machine. */
  path: string
  startSeconds: number
  endSeconds: number
  modulation: ItemModulation
  /** Names the item in the file's description. */
  label: string
}

/** Computes the item's curve; an item past the limits of a modulation export fails naming why. */
export async function itemCurve(i: ItemCurveInput): Promise<ModulationFile> {
  const seconds = i.endSeconds - i.startSeconds
  if (seconds > MODULATION_LIMITS.maxSeconds)
    throw new Error(`its control curve covers at most ${MODULATION_LIMITS.maxSeconds} s; the item lasts ${seconds} s`)
  const points = Math.round(seconds * i.modulation.rateHz)
  if (points > MODULATION_LIMITS.maxPoints)
    throw new Error(
      `its control curve would be ${points} points (at most ${MODULATION_LIMITS.maxPoints}); lower the curve's rate`,
    )
  return computeModulation(i.path, {
    ...i.modulation,
    startSeconds: i.startSeconds,
    endSeconds: i.endSeconds,
    label: i.label,
  })
}

/** The manifest's line for a curve file. */
export const manifestModulation = (file: string, m: ItemModulation, made: ModulationFile): ManifestModulation => ({
  file,
  source: m.source,
  format: m.format,
  rateHz: m.rateHz,
  scale: made.scale ?? made.unit,
})
