import { MergeTagsBody, RenameTagBody } from '@shared/schemas/tags'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body } from '../core/validate'
import { allTags, mergeTags } from './tags.service'

/** The tag manager: counts for everyone who browses, renames and merges for those who may edit any take. */
export function registerTagRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/tags/all', 'library:browse', async (_req, res) => {
    res.json({ tags: await allTags(ctx.db) })
  })

  api.route('post', '/tags/rename', 'takes:edit-any', async (req, res) => {
    const b = body(req, RenameTagBody)
    res.json(await mergeTags(ctx.db, req.user!, [b.from], b.to))
  })

  api.route('post', '/tags/merge', 'takes:edit-any', async (req, res) => {
    const b = body(req, MergeTagsBody)
    res.json(await mergeTags(ctx.db, req.user!, b.tags, b.into))
  })
}
