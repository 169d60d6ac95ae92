// Measuring a take again after a failure that may pass (a full disk, a crashed
// worker, a file restored from a backup). The failure text says which kind it was.
import type { User } from '@shared/schemas/auth'
import type { AppContext } from '../core/context'
import { AppError, notFound } from '../core/errors'
import { WavFormatError } from '../audio/wav-reader'
import { addEvent, findTake } from '../takes/takes.service'
import { assertMayEditTake } from '../takes/takes.service'

/** The failure text of a measuring job: what happened, then whether measuring again may help. */
export function failureText(message: string, err?: unknown): string {
  if (err instanceof WavFormatError) return `${message}. Measuring again will not help: the file itself cannot be read.`
  const code = (err as NodeJS.ErrnoException | undefined)?.code
  if (code === 'ENOENT')
    return `${message}. Measuring again will help only once the audio file is back in storage (restore it from a backup).`
  return `${message}. This may pass (a full disk, a stopped worker): measuring again may help.`
}

/** A ready take measured before the library's spectrum glyph existed (its stored analysis has none). */
function lacksGlyph(take: { status: string; analysis_json: string | null }): boolean {
  return take.status === 'ready' && take.analysis_json !== null && !take.analysis_json.includes('"glyph":')
}

/**
 * POST /api/takes/:id/measure: a failed take, or a ready one measured before glyphs, is queued for
 * measuring again (a designer, or the recordist who uploaded it).
 */
export async function measureAgain(ctx: AppContext, user: User, id: number) {
  const take = await findTake(ctx.db, id)
  if (!take) throw notFound('take', 'TAKE_NOT_FOUND')
  assertMayEditTake(user, take, 'measure again')
  const from = lacksGlyph(take) ? 'ready' : 'failed'
  if (take.status !== from) {
    throw new AppError(
      409,
      'NOT_FAILED',
      `Take ${take.id} is ${take.status}; only a take whose measuring failed (or that has no spectrum glyph yet) is measured again`,
      { status: take.status },
    )
  }
  if (!(await ctx.storage.exists(take.audio_path))) {
    throw new AppError(
      409,
      'FILE_MISSING',
      `Take ${take.id}'s audio file is not in storage; restore it from a backup, then measure again`,
    )
  }
  await ctx.db.transaction().execute(async (trx) => {
    const claimed = await trx
      .updateTable('takes')
      .set({ status: 'queued', progress: 0, error: null })
      .where('id', '=', id)
      .where('status', '=', from)
      .executeTakeFirst()
    if (Number(claimed.numUpdatedRows) !== 1)
      throw new AppError(409, 'NOT_FAILED', `Take ${take.id} was queued again meanwhile`)
    await addEvent(trx, id, user.id, 'requeued', 'Queued for measuring again')
    await ctx.jobs.enqueue(trx, 'analyze-take', id)
  })
  ctx.jobs.kick()
  const now = await findTake(ctx.db, id)
  return { id, status: now?.status ?? 'queued' }
}
