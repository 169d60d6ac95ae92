// The words of every e-mail the product sends, in one place.
import { ROLE_LABELS, type Role } from '@shared/permissions'
import type { OutgoingMail } from './mailer'

const sign = '\n\n— Strayfield'

export function invitationMail(to: string, role: Role, link: string, inviter: string): OutgoingMail {
  return {
    to,
    subject: 'You are invited to a Strayfield team',
    text:
      `${inviter} invited you to join their Strayfield team as ${ROLE_LABELS[role].toLowerCase()}.\n\n` +
      `Choose your name and password here (the link works once and expires in 72 hours):\n${link}` +
      sign,
  }
}

export function passwordResetMail(to: string, link: string): OutgoingMail {
  return {
    to,
    subject: 'Reset your Strayfield password',
    text:
      `Someone asked to reset the password of this Strayfield account. If it was you, set a new one here ` +
      `(the link works once and expires in 1 hour):\n${link}\n\nIf it was not you, ignore this message.` +
      sign,
  }
}
