// The rules a split's segments must meet, their file names, and the refusal of
// copies that would duplicate a take (a take's content hash is its identity).
import path from 'node:path'
import { MIN_SPLIT_SECONDS, type SplitBody } from '@shared/schemas/instrument'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import { findTakeBySha, type TakeJoined } from '../takes/takes.service'

const round6 = (s: number) => Math.round(s * 1e6) / 1e6

export type Measured = TakeJoined & { sample_rate: number; duration_seconds: number }

/** Segments as frame ranges: inside the take, long enough, not overlapping (touching is fine). */
export function checkSegments(take: Measured, frames: number, segments: SplitBody['segments']) {
  const sr = take.sample_rate
  const ranges = segments.map((s, index) => ({
    index,
    start: Math.round(s.startSeconds * sr),
    end: Math.min(frames, Math.round(s.endSeconds * sr)),
    seg: s,
  }))
  for (const r of ranges) {
    const { startSeconds: a, endSeconds: b } = r.seg
    if (!(a < b)) {
      throw new AppError(400, 'OUT_OF_RANGE', `Segment ${r.index + 1} must end after it starts`, { segment: r.index })
    }
    if (b > take.duration_seconds + 1e-6) {
      throw new AppError(
        400,
        'OUT_OF_RANGE',
        `Segment ${r.index + 1} ends at ${round6(b)} s, after the end of the take (${round6(take.duration_seconds)} s)`,
        { segment: r.index, durationSeconds: take.duration_seconds },
      )
    }
    if ((r.end - r.start) / sr < MIN_SPLIT_SECONDS - 1e-9) {
      throw new AppError(
        400,
        'SEGMENT_TOO_SHORT',
        `Segment ${r.index + 1} is ${round6(b - a)} s long; a split makes takes of at least ${MIN_SPLIT_SECONDS} s`,
        { segment: r.index, minSeconds: MIN_SPLIT_SECONDS },
      )
    }
  }
  const sorted = [...ranges].sort((x, y) => x.start - y.start)
  for (let i = 1; i < sorted.length; i++) {
    if (sorted[i].start < sorted[i - 1].end) {
      throw new AppError(
        400,
        'SEGMENTS_OVERLAP',
        `Segments ${sorted[i - 1].index + 1} and ${sorted[i].index + 1} overlap; segments of one split may touch but not overlap`,
        { segments: [sorted[i - 1].index, sorted[i].index] },
      )
    }
  }
  return ranges
}

/**
 * "hum-sweep.wav" → "hum-sweep part 2 of 5.wav", or for a take split off on its own
 * "hum-sweep from 12.50 s.wav" (≤ 255 characters).
 */
export function partName(filename: string, k: number, n: number, startSeconds: number): string {
  const ext = path.extname(filename) || '.wav'
  const stem = filename.slice(0, filename.length - path.extname(filename).length)
  const tail = n > 1 ? ` part ${k} of ${n}${ext}` : ` from ${startSeconds.toFixed(2)} s${ext}`
  return stem.slice(0, 255 - tail.length) + tail
}

/**
 * Identical copies cannot both be takes (a take's content hash is its identity), so a split
 * that would make one is refused whole, naming the segments and the take they equal.
 */
export async function refuseDuplicates(ctx: AppContext, hashes: string[]) {
  for (const [i, h] of hashes.entries()) {
    const j = hashes.indexOf(h)
    if (j !== i) {
      throw new AppError(
        409,
        'DUPLICATE_SEGMENT',
        `Segments ${j + 1} and ${i + 1} hold the same bytes, and one take cannot be stored twice; change one of their ranges, or split once with only one of them`,
        { segment: i, sameAsSegment: j },
      )
    }
    const existing = await findTakeBySha(ctx.db, h)
    if (existing) {
      throw new AppError(
        409,
        'DUPLICATE_SEGMENT',
        `Segment ${i + 1} has the same content as take ${existing.id} (${existing.filename}), which is already in the library; nothing was split`,
        { segment: i, takeId: existing.id },
      )
    }
  }
}
