import { SMTPServer } from 'smtp-server'
import { simpleParser, type AddressObject } from 'mailparser'
import type { Db } from '../core/database'
import { nowIso } from '../core/time'

export interface MailCatcher {
  port: number
  close(): Promise<void>
}

const addresses = (a: AddressObject | AddressObject[] | undefined): string =>
  (Array.isArray(a) ? a : a ? [a] : []).map((x) => x.text).join(', ')

/** An SMTP server on loopback that keeps every message it receives in SQLite. */
export async function startMailCatcher(db: Db, port = 0): Promise<MailCatcher> {
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    banner: 'Strayfield mail catcher',
    logger: false,
    size: 10 * 1024 * 1024,
    onData(stream, _session, callback) {
      simpleParser(stream)
        .then((mail) =>
          db
            .insertInto('mail_messages')
            .values({
              message_id: mail.messageId ?? null,
              from_addr: addresses(mail.from),
              to_addr: addresses(mail.to),
              subject: mail.subject ?? '',
              text: mail.text ?? '',
              html: typeof mail.html === 'string' ? mail.html : null,
              received_at: nowIso(),
            })
            .execute(),
        )
        .then(() => callback())
        .catch((err: Error) => callback(err))
    },
  })
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject)
    server.listen(port, '127.0.0.1', () => resolve())
  })
  const address = server.server.address()
  const actualPort = typeof address === 'object' && address ? address.port : port
  return {
    port: actualPort,
    close: () => new Promise<void>((resolve) => server.close(() => resolve())),
  }
}
