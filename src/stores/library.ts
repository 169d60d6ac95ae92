import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'
import { api } from '@/api/client'

/** Suggestions the library offers while tagging and linking devices. */
export const useLibraryStore = defineStore('library', () => {
  const tagSuggestions = ref<string[]>([])
  const stateSuggestions = ref<string[]>([])

  async function loadSuggestions() {
    const [tags, states] = await Promise.all([
      api.get<{ tags: { tag: string; count: number }[] }>('/api/tags'),
      api.get<{ states: { state: string; count: number }[] }>('/api/states'),
    ])
    tagSuggestions.value = tags.tags.map((t) => t.tag)
    stateSuggestions.value = states.states.map((s) => s.state)
  }

  return { tagSuggestions, stateSuggestions, loadSuggestions }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useLibraryStore, import.meta.hot))
