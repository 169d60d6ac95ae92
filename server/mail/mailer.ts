import nodemailer, { type Transporter } from 'nodemailer'
import type { Config } from '../core/config'
import type { Db } from '../core/database'
import { startMailCatcher, type MailCatcher } from './catcher'

export interface OutgoingMail {
  to: string
  subject: string
  text: string
  html?: string
}

export interface Mailer {
  send(mail: OutgoingMail): Promise<void>
  /** Where mail goes: the SMTP URL without credentials, or the catcher's loopback address. */
  describe(): string
  close(): Promise<void>
}

export const FROM_ADDRESS = 'Strayfield <no-reply@strayfield.invalid>'

/**
 * Mail always travels over real SMTP through nodemailer: to SMTP_URL when set,
 * otherwise to the embedded catcher on loopback, which stores each message for
 * the Outbox page.
 */
export async function createMailer(config: Config, db: Db): Promise<Mailer> {
  let catcher: MailCatcher | null = null
  let transport: Transporter
  if (config.smtpUrl) {
    transport = nodemailer.createTransport(config.smtpUrl)
  } else {
    catcher = await startMailCatcher(db, config.mailCatcherPort)
    transport = nodemailer.createTransport({ host: '127.0.0.1', port: catcher.port, secure: false, ignoreTLS: true })
  }
  return {
    async send(mail) {
      await transport.sendMail({ from: FROM_ADDRESS, ...mail })
    },
    describe() {
      if (catcher) return `built-in mail catcher on 127.0.0.1:${catcher.port}`
      const u = new URL(config.smtpUrl!)
      return `${u.protocol}//${u.hostname}:${u.port || 'default'}`
    },
    async close() {
      transport.close()
      await catcher?.close()
    },
  }
}
