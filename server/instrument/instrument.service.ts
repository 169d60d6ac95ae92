// Rules of the instrument tools: who may ask (whoever may mark regions on the
// take), which range is read (within the take, at most MAX_*_SECONDS), and the
// answer in seconds of the take. Detection runs on the heavy-work pool.
import {
  MAX_LOOP_SECONDS,
  MAX_ONSET_SECONDS,
  MIN_LOOP_SECONDS,
  type LoopCycleQuery,
  type LoopSuggestionsBody,
  type LoopSuggestionsResponse,
  type OnsetSuggestionsBody,
  type OnsetSuggestionsResponse,
} from '@shared/schemas/instrument'
import type { User } from '@shared/schemas/auth'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import { assertMayEditTake, loadTake } from '../takes/takes.service'
import type { TakeJoined } from '../takes/takes.service'

const round6 = (s: number) => Math.round(s * 1e6) / 1e6

async function measuredTake(
  ctx: AppContext,
  user: User,
  id: number,
): Promise<TakeJoined & { sample_rate: number; duration_seconds: number }> {
  const take = await loadTake(ctx.db, id)
  assertMayEditTake(user, take, 'look for one-shots and loops in')
  if (take.status !== 'ready' || !take.sample_rate || take.duration_seconds === null) {
    throw new AppError(
      409,
      'NOT_MEASURED',
      `Take ${take.id} is ${take.status}; proposals can be made once it is measured`,
    )
  }
  return take as TakeJoined & { sample_rate: number; duration_seconds: number }
}

/** The range in frames: inside the take, start before end, at most `max` seconds long. */
function rangeFrames(
  take: { sample_rate: number; duration_seconds: number },
  start: number,
  end: number,
  max: number,
  tool: string,
) {
  const d = take.duration_seconds
  if (!(start < end))
    throw new AppError(400, 'OUT_OF_RANGE', 'The range must end after it starts', {
      startSeconds: start,
      endSeconds: end,
    })
  if (end > d + 1e-9) {
    throw new AppError(
      400,
      'OUT_OF_RANGE',
      `The range ends at ${round6(end)} s, after the end of the take (${round6(d)} s)`,
      {
        startSeconds: start,
        endSeconds: end,
        durationSeconds: d,
      },
    )
  }
  if (end - start > max) {
    throw new AppError(
      400,
      'RANGE_TOO_LONG',
      `${tool} reads at most ${max} s at a time; choose a range of at most ${max} s (${round6(end - start)} s were asked for)`,
      {
        maxSeconds: max,
        seconds: end - start,
      },
    )
  }
  const sr = take.sample_rate
  return { sr, startFrame: Math.round(start * sr), endFrame: Math.min(Math.round(end * sr), Math.round(d * sr)) }
}

export async function onsetSuggestions(
  ctx: AppContext,
  user: User,
  id: number,
  body: OnsetSuggestionsBody,
): Promise<OnsetSuggestionsResponse> {
  const take = await measuredTake(ctx, user, id)
  const r = rangeFrames(
    take,
    body.startSeconds ?? 0,
    body.endSeconds ?? take.duration_seconds,
    MAX_ONSET_SECONDS,
    'Slicing at onsets',
  )
  const slices = await ctx.heavy.onsets(`user:${user.id}`, {
    path: await ctx.storage.local(take.audio_path),
    startFrame: r.startFrame,
    endFrame: r.endFrame,
    sensitivity: body.sensitivity,
  })
  return {
    slices: slices.map((s) => ({
      startSeconds: round6((r.startFrame + s.start) / r.sr),
      endSeconds: round6((r.startFrame + s.end) / r.sr),
      peakDbfs: s.peak > 0 ? Math.round(20 * Math.log10(s.peak) * 100) / 100 : -200,
    })),
  }
}

export async function loopSuggestions(
  ctx: AppContext,
  user: User,
  id: number,
  body: LoopSuggestionsBody,
): Promise<LoopSuggestionsResponse> {
  const take = await measuredTake(ctx, user, id)
  const r = rangeFrames(take, body.startSeconds, body.endSeconds, MAX_LOOP_SECONDS, 'Finding loops')
  if (body.approxLengthSeconds !== undefined && body.approxLengthSeconds > body.endSeconds - body.startSeconds) {
    throw new AppError(
      400,
      'LOOP_TOO_LONG',
      `A loop of ${round6(body.approxLengthSeconds)} s does not fit in a range of ${round6(body.endSeconds - body.startSeconds)} s`,
    )
  }
  if (body.endSeconds - body.startSeconds < MIN_LOOP_SECONDS * 2) {
    throw new AppError(400, 'RANGE_TOO_SHORT', `Finding loops needs a range of at least ${MIN_LOOP_SECONDS * 2} s`)
  }
  const loops = await ctx.heavy.loops(`user:${user.id}`, {
    path: await ctx.storage.local(take.audio_path),
    startFrame: r.startFrame,
    endFrame: r.endFrame,
    approxFrames: body.approxLengthSeconds === undefined ? undefined : Math.round(body.approxLengthSeconds * r.sr),
    minFrames: Math.round(MIN_LOOP_SECONDS * r.sr),
  })
  return {
    loops: loops.map((l) => ({
      startSeconds: round6((r.startFrame + l.start) / r.sr),
      endSeconds: round6((r.startFrame + l.end) / r.sr),
      score: l.score,
      crossfadeMs: l.crossfadeMs,
    })),
  }
}

/** One cycle of a loop for the bench's audition (anyone who may listen to the take). */
export async function loopCycle(ctx: AppContext, user: User, id: number, q: LoopCycleQuery): Promise<Buffer> {
  const take = await loadTake(ctx.db, id)
  if (!take.sample_rate || take.duration_seconds === null) {
    throw new AppError(
      409,
      'NOT_MEASURED',
      `Take ${take.id} is ${take.status}; its loops can be heard once it is measured`,
    )
  }
  const t = take as TakeJoined & { sample_rate: number; duration_seconds: number }
  const r = rangeFrames(t, q.startSeconds, q.endSeconds, MAX_LOOP_SECONDS, 'Looping')
  if (r.endFrame - r.startFrame < 2) throw new AppError(400, 'RANGE_TOO_SHORT', 'A loop needs at least two samples')
  return ctx.heavy.loopCycle(`user:${user.id}`, {
    path: ctx.storage.abs(take.audio_path),
    startFrame: r.startFrame,
    endFrame: r.endFrame,
    crossfadeFrames: Math.round(((q.crossfadeMs ?? 0) / 1000) * r.sr),
  })
}
