import { MentionPreviewBody } from '@shared/schemas/mentions'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body } from '../core/validate'
import { members, previewMentions } from './mentions.service'

/** The comment box's @-picker and its "will notify" line, for everyone who may comment. */
export function registerMentionRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/mentions/members', 'comments:write', async (_req, res) => {
    res.json({ members: await members(ctx.db) })
  })

  api.route('post', '/mentions/preview', 'comments:write', async (req, res) => {
    res.json(await previewMentions(ctx.db, req.user!, body(req, MentionPreviewBody).body))
  })
}
