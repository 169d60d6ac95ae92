import { SMTPServer } from 'smtp-server'
import { simpleParser, type ParsedMail } from 'mailparser'

/** An SMTP server of the test's own on loopback: proof that mail really travels over SMTP. */
export async function startTestSmtp() {
  const received: ParsedMail[] = []
  const waiters: (() => void)[] = []
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ['STARTTLS', 'AUTH'],
    logger: false,
    onData(stream, _s, cb) {
      simpleParser(stream)
        .then((m) => {
          received.push(m)
          waiters.splice(0).forEach((w) => w())
          cb()
        })
        .catch(cb)
    },
  })
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', () => r()))
  const port = (server.server.address() as { port: number }).port
  return {
    url: `smtp://127.0.0.1:${port}`,
    received,
    /** Resolves with the first message to `to` (waits up to 10 s). */
    async waitFor(to: string): Promise<ParsedMail> {
      const deadline = Date.now() + 10_000
      for (;;) {
        const m = received.find((x) => JSON.stringify(x.to).includes(to))
        if (m) return m
        if (Date.now() > deadline) throw new Error(`no mail to ${to} arrived`)
        await new Promise<void>((r) => {
          waiters.push(r)
          setTimeout(r, 200)
        })
      }
    },
    close: () => new Promise<void>((r) => server.close(() => r())),
  }
}

export const linkToken = (text: string, kind: 'join' | 'reset'): string => {
  const m = text.match(new RegExp(`/${kind}/([A-Za-z0-9_-]+)`))
  if (!m) throw new Error(`no /${kind}/ link in mail: ${text}`)
  return m[1]
}
