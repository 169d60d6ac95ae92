import { IdParams } from '@shared/schemas/common'
import { CommentParams, CreateCommentBody, UpdateCommentBody } from '@shared/schemas/library'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import { createComment, editComment, listComments } from './comments.service'

/** The team's threads on a take. Bodies are plain text in and out: never parsed, escaped or rendered here. */
export function registerCommentRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/takes/:id/comments', 'library:browse', async (req, res) => {
    res.json({ comments: await listComments(ctx.db, params(req, IdParams).id) })
  })

  api.route('post', '/takes/:id/comments', 'comments:write', async (req, res) => {
    res
      .status(201)
      .json({ comment: await createComment(ctx, req.user!, params(req, IdParams).id, body(req, CreateCommentBody)) })
  })

  api.route('patch', '/takes/:id/comments/:commentId', 'comments:write', async (req, res) => {
    const p = params(req, CommentParams)
    res.json({ comment: await editComment(ctx, req.user!, p.id, p.commentId, body(req, UpdateCommentBody)) })
  })
}
