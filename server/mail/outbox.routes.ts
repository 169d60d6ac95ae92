import type { OutboxMessage } from '@shared/schemas/team'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import type { MailMessageRow } from '../../db/schema'

const rowToMessage = (r: MailMessageRow): OutboxMessage => ({
  id: r.id,
  from: r.from_addr,
  to: r.to_addr,
  subject: r.subject,
  text: r.text,
  html: r.html,
  receivedAt: r.received_at,
})

export function registerOutboxRoutes(api: Api, ctx: AppContext) {
  api.route('get', '/outbox', 'team:manage', async (_req, res) => {
    const rows = await ctx.db.selectFrom('mail_messages').selectAll().orderBy('id', 'desc').limit(500).execute()
    res.json({ messages: rows.map(rowToMessage), transport: ctx.mailer.describe() })
  })
}
