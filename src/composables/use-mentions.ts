// The comment box's @-picker: where an "@name" is being typed, which team
// members match it, what choosing one writes, and (from the server, by the
// same rule that sends the mail) who the draft will notify.
import { onBeforeUnmount, ref, watch, type Ref } from 'vue'
import { mentionKey, type UserRef } from '@shared/schemas/library'
import type { MentionMember, MentionPreviewResponse } from '@shared/schemas/mentions'
import { api } from '@/api/client'

/** Characters that may sit right before an "@" that starts a mention (anything that cannot be part of an e-mail address). */
const BEFORE = /[^\p{L}\p{N}._%+@-]/u
const HANDLE_SO_FAR = /^[\p{L}\p{N}._-]*$/u

/** The "@query" the caret is at the end of, or null: "@da|" → { start: index of "@", query: "da" }. */
export function activeMention(text: string, caret: number): { start: number; query: string } | null {
  const head = text.slice(0, caret)
  const at = head.lastIndexOf('@')
  if (at < 0) return null
  const query = head.slice(at + 1)
  if (!HANDLE_SO_FAR.test(query) || query.length > 60) return null
  if (at > 0 && !BEFORE.test(head[at - 1])) return null
  return { start: at, query }
}

/** Replaces the "@query" ending at `caret` with "@Handle " and says where the caret goes. */
export function insertMention(
  text: string,
  start: number,
  caret: number,
  handle: string,
): { text: string; caret: number } {
  const inserted = `@${handle} `
  const rest = text.slice(caret).replace(/^ /u, '')
  return { text: text.slice(0, start) + inserted + rest, caret: start + inserted.length }
}

/** Members whose name matches what was typed (accents, case and punctuation ignored); names starting with it first. */
export function matchMembers<T extends { name: string }>(members: T[], query: string, limit = 8): T[] {
  const q = mentionKey(query)
  if (!q) return members.slice(0, limit)
  const starts = members.filter(
    (m) => mentionKey(m.name).startsWith(q) || m.name.split(/\s+/u).some((w) => mentionKey(w).startsWith(q)),
  )
  const inside = members.filter((m) => !starts.includes(m) && mentionKey(m.name).includes(q))
  return [...starts, ...inside].slice(0, limit)
}

let membersCache: Promise<MentionMember[]> | null = null
/** The team, asked once per page load. */
export function loadMembers(): Promise<MentionMember[]> {
  membersCache ??= api.get<{ members: MentionMember[] }>('/api/mentions/members').then(
    (r) => r.members,
    (e: unknown) => {
      membersCache = null
      throw e
    },
  )
  return membersCache
}

/** Who `text` will notify and which handles name nobody, asked of the server a moment after typing stops. */
export function useMentionPreview(text: Ref<string>, pauseMs = 300) {
  const notified = ref<UserRef[]>([])
  const unmatched = ref<string[]>([])
  let timer: ReturnType<typeof setTimeout> | null = null
  let seq = 0
  watch(
    text,
    (body) => {
      if (timer) clearTimeout(timer)
      if (!body.includes('@')) {
        notified.value = []
        unmatched.value = []
        return
      }
      timer = setTimeout(async () => {
        const mine = ++seq
        const res = await api
          .post<MentionPreviewResponse>('/api/mentions/preview', { body: body.slice(0, 4000) })
          .catch(() => null)
        if (res && mine === seq) {
          notified.value = res.notified
          unmatched.value = res.unmatched
        }
      }, pauseMs)
    },
    { immediate: true },
  )
  onBeforeUnmount(() => timer && clearTimeout(timer))
  return { notified, unmatched }
}
