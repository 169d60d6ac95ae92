// Splitting a sweep: proposals of where it falls apart (on the heavy-work pool)
// and the split itself, which makes each range a take of its own in the same
// capture session. All or nothing: the copies are written to incoming/ first,
// their content hashes checked, then one transaction inserts every take and
// moves every file; any failure removes what was written and leaves no row.
import fs from 'node:fs'
import path from 'node:path'
import {
  MIN_SPLIT_SECONDS,
  type SplitBody,
  type SplitResponse,
  type SplitSuggestionsBody,
  type SplitSuggestionsResponse,
} from '@shared/schemas/instrument'
import { formatTakeTime } from '@shared/schemas/library'
import type { User } from '@shared/schemas/auth'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import { probeWav } from '../audio/wav-reader'
import { isStorageFull, storageFull } from '../ingest/storage-errors'
import {
  assertMayEditTake,
  findTakeBySha,
  insertTake,
  loadTake,
  recordEvent,
  type TakeJoined,
} from '../takes/takes.service'
import { takeRowsToTakes } from '../takes/takes.mapper'

const round6 = (s: number) => Math.round(s * 1e6) / 1e6
const rmQuiet = (p: string) => fs.rmSync(p, { force: true })

type Measured = TakeJoined & { sample_rate: number; duration_seconds: number }

async function measuredTake(ctx: AppContext, user: User, id: number, what: string): Promise<Measured> {
  const take = await loadTake(ctx.db, id)
  assertMayEditTake(user, take, what)
  if (take.status !== 'ready' || !take.sample_rate || take.duration_seconds === null) {
    throw new AppError(409, 'NOT_MEASURED', `Take ${take.id} is ${take.status}; it can be split once it is measured`)
  }
  return take as Measured
}

export async function splitSuggestions(
  ctx: AppContext,
  user: User,
  id: number,
  body: SplitSuggestionsBody,
): Promise<SplitSuggestionsResponse> {
  const take = await measuredTake(ctx, user, id, 'look for splits in')
  const sr = take.sample_rate
  const segments = await ctx.heavy.split(`user:${user.id}`, {
    path: ctx.storage.abs(take.audio_path),
    minSegmentSeconds: body.minSegmentSeconds ?? 2,
    sensitivity: body.sensitivity,
  })
  return {
    segments: segments.map((s) => ({
      startSeconds: round6(s.start / sr),
      endSeconds: round6(s.end / sr),
      confidence: s.confidence,
      reason: s.reason,
    })),
  }
}

/** Segments as frame ranges: inside the take, long enough, not overlapping (touching is fine). */
function checkSegments(take: Measured, frames: number, segments: SplitBody['segments']) {
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
function partName(filename: string, k: number, n: number, startSeconds: number): string {
  const ext = path.extname(filename) || '.wav'
  const stem = filename.slice(0, filename.length - path.extname(filename).length)
  const tail = n > 1 ? ` part ${k} of ${n}${ext}` : ` from ${startSeconds.toFixed(2)} s${ext}`
  return stem.slice(0, 255 - tail.length) + tail
}

/**
 * Identical copies cannot both be takes (a take's content hash is its identity), so a split
 * that would make one is refused whole, naming the segments and the take they equal.
 */
async function refuseDuplicates(ctx: AppContext, hashes: string[]) {
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

export async function splitTake(ctx: AppContext, user: User, id: number, body: SplitBody): Promise<SplitResponse> {
  const take = await measuredTake(ctx, user, id, 'split')
  const src = ctx.storage.abs(take.audio_path)
  const info = await probeWav(src)
  const ranges = checkSegments(take, info.format.frames, body.segments)
  const outPaths = ranges.map(() => ctx.storage.incomingPath())
  const moved: string[] = []
  try {
    const copies = await ctx.heavy
      .splitCopy(`user:${user.id}`, { path: src, ranges, outPaths })
      .catch((err: unknown) => {
        throw isStorageFull(err) || /ENOSPC/.test(String(err)) ? storageFull() : err
      })
    await refuseDuplicates(
      ctx,
      copies.map((c) => c.sha256),
    )
    const formats = await Promise.all(outPaths.map((p) => probeWav(p)))
    const [sources, tags] = await Promise.all([
      ctx.db.selectFrom('take_sources').selectAll().where('take_id', '=', take.id).execute(),
      ctx.db.selectFrom('take_tags').select('tag').where('take_id', '=', take.id).execute(),
    ])
    const n = ranges.length
    const ids = await ctx.db.transaction().execute(async (trx) => {
      const made: number[] = []
      for (const [k, r] of ranges.entries()) {
        const copy = copies[k]
        const format = formats[k].format
        const relative = ctx.storage.audioRelative(copy.sha256)
        const filename = partName(take.filename, k + 1, n, r.start / take.sample_rate)
        const span = `${formatTakeTime(r.start / take.sample_rate)}\u2013${formatTakeTime(r.end / take.sample_rate)}`
        const row = await insertTake(trx, {
          session_id: take.session_id,
          // The recording stays the recordist's: whoever uploaded the sweep may log its parts.
          uploader_id: take.uploader_id,
          filename,
          title:
            n > 1
              ? `${take.title} (part ${k + 1} of ${n})`
              : `${take.title} (from ${formatTakeTime(r.start / take.sample_rate)})`,
          description: take.description,
          notes: take.notes,
          audio_path: relative,
          size_bytes: copy.size,
          sha256: copy.sha256,
          status: 'queued',
          duration_seconds: format.durationSeconds,
          sample_rate: format.sampleRate,
          channels: format.channels,
          bits_per_sample: format.bitsPerSample,
          format_json: JSON.stringify(format),
          bext_description: '',
        })
        if (sources.length)
          await trx
            .insertInto('take_sources')
            .values(sources.map((s) => ({ take_id: row.id, source_id: s.source_id, state: s.state })))
            .execute()
        if (tags.length)
          await trx
            .insertInto('take_tags')
            .values(tags.map((t) => ({ take_id: row.id, tag: t.tag })))
            .execute()
        await recordEvent(trx, row.id, user, 'split', `Split from take ${take.id} (${take.filename}), ${span}`)
        await ctx.jobs.enqueue(trx, 'analyze-take', row.id)
        made.push(row.id)
      }
      await recordEvent(
        trx,
        take.id,
        user,
        'split',
        `Split into ${n === 1 ? 'take' : 'takes'} ${made.join(', ')}; this take stays as it was`,
      )
      // Every row holds its hash: only now do the copies take their content-addressed names.
      for (const [k, c] of copies.entries()) {
        const finalPath = ctx.storage.abs(ctx.storage.audioRelative(c.sha256))
        fs.mkdirSync(path.dirname(finalPath), { recursive: true })
        fs.renameSync(outPaths[k], finalPath)
        moved.push(finalPath)
      }
      return made
    })
    ctx.jobs.kick()
    const rows = await Promise.all(ids.map((made) => loadTake(ctx.db, made)))
    return { takes: await takeRowsToTakes(ctx.db, rows) }
  } catch (err) {
    // Rolled back after a move (a commit that failed): a moved file goes unless a row refers to it.
    for (const p of moved) {
      const sha = path.basename(p, '.wav')
      if (!(await findTakeBySha(ctx.db, sha).catch(() => true))) rmQuiet(p)
    }
    if (isStorageFull(err)) throw storageFull()
    throw err
  } finally {
    for (const p of outPaths) rmQuiet(p)
  }
}
