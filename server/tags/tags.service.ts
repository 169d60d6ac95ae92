import type { User } from '@shared/schemas/auth'
import type { TagChangeResponse, TagCount } from '@shared/schemas/tags'
import type { Db } from '../core/database'
import { AppError } from '../core/errors'
import { recordEvent } from '../takes/takes.service'
import { allTagCounts, retag, tagsInUse, takesWithTags } from './tags.repository'

export async function allTags(db: Db): Promise<TagCount[]> {
  return (await allTagCounts(db)).map((r) => ({ tag: r.tag, count: Number(r.n) }))
}

const quoted = (tags: string[]) => tags.map((t) => `\u201c${t}\u201d`).join(', ')

/**
 * Every tag of `from` becomes `into` on every take that carries it, in one
 * transaction; each changed take gets one history entry saying what happened
 * to its own tags. A rename into a tag already in use is a merge.
 */
export async function mergeTags(db: Db, user: User, from: string[], into: string): Promise<TagChangeResponse> {
  const others = from.filter((t) => t !== into)
  const used = await tagsInUse(db, others)
  const unknown = others.filter((t) => !used.has(t))
  if (unknown.length) {
    throw new AppError(404, 'TAG_NOT_FOUND', `No take carries the tag ${quoted(unknown)}; nothing was changed`, {
      tags: unknown,
    })
  }
  let takes = 0
  await db.transaction().execute(async (trx) => {
    const byTake = await takesWithTags(trx, others)
    for (const [takeId, had] of byTake) {
      await retag(trx, takeId, had, into)
      const verb = had.length === 1 && others.length === 1 ? 'renamed to' : 'merged into'
      await recordEvent(
        trx,
        takeId,
        user,
        'tagged',
        `Tag${had.length === 1 ? '' : 's'} ${quoted(had)} ${verb} \u201c${into}\u201d (tag manager)`,
      )
      takes++
    }
  })
  return { into, takes, tags: await allTags(db) }
}
