// The rules of a modulation export: the take must be measured, the excerpt must
// lie inside it and stay within the limits of MODULATION_LIMITS (length, points),
// and the file is named after the take, the source and the excerpt.
import { MODULATION_LIMITS, type ModulationBody } from '@shared/schemas/modulation'
import type { Db } from '../core/database'
import { AppError, notFound } from '../core/errors'
import { findTake } from '../takes/takes.service'
import type { ModulationOrder } from './modulation-files'

export interface ModulationPlan {
  order: ModulationOrder
  /** The take's audio, relative to the storage root. */
  audioPath: string
  fileName: string
}

const EXTENSIONS = { csv: 'csv', wav: 'wav', midi: 'mid' } as const
const round = (s: number) => Math.round(s * 1000) / 1000

/** "coil-hum_envelope_1.5-4s.mid": the take's name without its extension, in safe characters. */
export function modulationFileName(takeName: string, o: ModulationOrder, whole: boolean): string {
  const base =
    takeName
      .replace(/\.[^.]*$/u, '')
      .replace(/[^A-Za-z0-9._-]+/gu, '-')
      .replace(/^[-.]+|-+$/gu, '')
      .slice(0, 80) || 'take'
  const span = whole ? '' : `_${round(o.startSeconds)}-${round(o.endSeconds)}s`
  return `${base}_${o.source}${span}.${EXTENSIONS[o.format]}`
}

export async function planModulation(db: Db, takeId: number, b: ModulationBody): Promise<ModulationPlan> {
  const row = await findTake(db, takeId)
  if (!row) throw notFound('take', 'TAKE_NOT_FOUND')
  if (row.status !== 'ready' || !row.sample_rate || row.duration_seconds === null) {
    throw new AppError(
      409,
      'NOT_MEASURED',
      `Take ${row.id} is ${row.status}; modulation sources can be made once it is measured`,
    )
  }
  const duration = row.duration_seconds
  const start = b.startSeconds ?? 0
  const end = b.endSeconds ?? duration
  if (start >= duration || end > duration + 1e-6) {
    throw new AppError(
      400,
      'EXCERPT_OUT_OF_RANGE',
      `The excerpt ${round(start)}–${round(end)} s runs past the end of the take; start and end must lie within 0–${round(duration)} s`,
      { startSeconds: start, endSeconds: end, durationSeconds: duration },
    )
  }
  const seconds = end - start
  // A microsecond of slack: times arrive as decimals, and their difference is not exact in binary.
  if (seconds > MODULATION_LIMITS.maxSeconds + 1e-6) {
    throw new AppError(
      400,
      'EXCERPT_TOO_LONG',
      `A modulation source covers at most ${MODULATION_LIMITS.maxSeconds} s; ${round(seconds)} s were asked for. Choose startSeconds and endSeconds within that length`,
      { maxSeconds: MODULATION_LIMITS.maxSeconds, seconds },
    )
  }
  const points = Math.round(seconds * b.rateHz)
  if (points > MODULATION_LIMITS.maxPoints) {
    throw new AppError(
      400,
      'TOO_MANY_POINTS',
      `${round(seconds)} s at ${b.rateHz} Hz would be ${points} points; at most ${MODULATION_LIMITS.maxPoints} are made at once. Lower rateHz or shorten the excerpt`,
      { maxPoints: MODULATION_LIMITS.maxPoints, points },
    )
  }
  const order: ModulationOrder = {
    ...b,
    startSeconds: start,
    endSeconds: end,
    label: `take ${row.id} (${row.filename})`,
  }
  const whole = b.startSeconds === undefined && b.endSeconds === undefined
  return { order, audioPath: row.audio_path, fileName: modulationFileName(row.filename, order, whole) }
}
