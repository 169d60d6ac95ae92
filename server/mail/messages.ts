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

export function mentionMail(
  to: string,
  m: { author: string; takeTitle: string; time: string; link: string; body: string },
): OutgoingMail {
  const quoted = m.body.length > 1000 ? `${m.body.slice(0, 1000)}…` : m.body
  return {
    to,
    subject: `${m.author} mentioned you on \u201c${m.takeTitle}\u201d`.replace(/\s+/g, ' ').slice(0, 200),
    text:
      `${m.author} mentioned you in a comment on the take \u201c${m.takeTitle}\u201d at ${m.time}:\n\n` +
      quoted
        .split(/\r?\n/)
        .map((l) => `> ${l}`)
        .join('\n') +
      `\n\nListen from that point:\n${m.link}` +
      sign,
  }
}

export function packPublishedMail(
  to: string,
  packName: string,
  version: number,
  link: string,
  note: string | null = null,
): OutgoingMail {
  const changed = note?.trim() ? `What changed in version ${version}:\n${note.trim()}\n\n` : ''
  return {
    to,
    subject: `New version of the pack "${packName}": version ${version}`,
    text:
      `Version ${version} of the sample pack "${packName}", which you follow, is published and ready to download:\n${link}\n\n` +
      changed +
      `You get this message because you follow the pack; unfollow it on the same page.` +
      sign,
  }
}
