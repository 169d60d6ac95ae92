import type { User } from '@shared/schemas/auth'
import { mentionHandles, resolveMentions } from '@shared/schemas/library'
import type { MentionMember, MentionPreviewResponse } from '@shared/schemas/mentions'
import type { Db } from '../core/database'
import { mentionableMembers } from './mentions.repository'

/** "Dana Humbucker" → "Dana.Humbucker": a handle the mention rule reads as the full name. */
export function handleOf(name: string): string {
  return (
    name
      .normalize('NFC')
      .match(/[\p{L}\p{N}]+/gu)
      ?.join('.') ?? ''
  )
}

/** Active members with their handles; e-mail addresses stay on the server. */
export async function members(db: Db): Promise<MentionMember[]> {
  return (await mentionableMembers(db))
    .map((m) => ({ id: m.id, name: m.name, handle: handleOf(m.name) }))
    .filter((m) => m.handle)
}

/** Who posting `body` would notify (never the author), and the handles that name nobody. */
export async function previewMentions(db: Db, author: User, body: string): Promise<MentionPreviewResponse> {
  const all = await mentionableMembers(db)
  const notified = resolveMentions(body, all)
    .filter((m) => m.id !== author.id)
    .map((m) => ({ id: m.id, name: m.name }))
  const unmatched = [...new Set(mentionHandles(body).map((h) => h.handle))].filter(
    (h) => resolveMentions(`@${h}`, all).length === 0,
  )
  return { notified, unmatched }
}
