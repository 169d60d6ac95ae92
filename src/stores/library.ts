import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'
import { normalizeTag } from '@shared/schemas/library'
import type { TagChangeResponse, TagCount } from '@shared/schemas/tags'
import { api } from '@/api/client'

/** Suggestions the library offers while tagging and linking devices, and the tag manager. */
export const useLibraryStore = defineStore('library', () => {
  const tagSuggestions = ref<string[]>([])
  const stateSuggestions = ref<string[]>([])
  const allTags = ref<TagCount[]>([])
  /** Tags known to be in use (or known not to be), so a chip can say "new" before it is applied. */
  const known = ref(new Map<string, boolean>())

  async function loadSuggestions() {
    const [tags, states] = await Promise.all([
      api.get<{ tags: { tag: string; count: number }[] }>('/api/tags'),
      api.get<{ states: { state: string; count: number }[] }>('/api/states'),
    ])
    tagSuggestions.value = tags.tags.map((t) => t.tag)
    for (const t of tagSuggestions.value) known.value.set(t, true)
    stateSuggestions.value = states.states.map((s) => s.state)
  }

  /** Whether some take already carries `tag` (asked once per tag, then remembered). */
  async function tagExists(raw: string): Promise<boolean> {
    const tag = normalizeTag(raw)
    const hit = known.value.get(tag)
    if (hit !== undefined) return hit
    const res = await api.get<{ tags: { tag: string }[] }>(`/api/tags?q=${encodeURIComponent(tag)}&limit=500`)
    const exists = res.tags.some((t) => t.tag === tag)
    known.value = new Map(known.value).set(tag, exists)
    return exists
  }

  /** After tags were applied: every tag of `tags` now exists. */
  function markUsed(tags: string[]) {
    const next = new Map(known.value)
    for (const t of tags) next.set(normalizeTag(t), true)
    known.value = next
  }

  async function loadAllTags() {
    allTags.value = (await api.get<{ tags: TagCount[] }>('/api/tags/all')).tags
  }

  async function renameTag(from: string, to: string) {
    const res = await api.post<TagChangeResponse>('/api/tags/rename', { from, to })
    allTags.value = res.tags
    known.value = new Map()
    return res
  }

  async function mergeTags(tags: string[], into: string) {
    const res = await api.post<TagChangeResponse>('/api/tags/merge', { tags, into })
    allTags.value = res.tags
    known.value = new Map()
    return res
  }

  return {
    tagSuggestions,
    stateSuggestions,
    allTags,
    known,
    loadSuggestions,
    tagExists,
    markUsed,
    loadAllTags,
    renameTag,
    mergeTags,
  }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useLibraryStore, import.meta.hot))
