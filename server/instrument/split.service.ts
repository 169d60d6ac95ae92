// Splitting a sweep: proposals of where it falls apart (on the heavy-work pool)
// and the split itself, which makes each range a take of its own in the same
// capture session. All or nothing: the copies are written to incoming/ first,
// their content hashes checked, then one transaction inserts every take and
// moves every file; any failure removes what was written and leaves no row.
import fs from 'node:fs'
import path from 'node:path'
import {
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
import { assertMayEditTake, findTakeBySha, insertTake, loadTake, recordEvent } from '../takes/takes.service'
import { takeRowsToTakes } from '../takes/takes.mapper'
import { checkSegments, partName, refuseDuplicates, type Measured } from './split-rules'

const round6 = (s: number) => Math.round(s * 1e6) / 1e6
const rmQuiet = (p: string) => fs.rmSync(p, { force: true })

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
