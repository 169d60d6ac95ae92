import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'
import type { CreateSourceBody, Source, UpdateSourceBody } from '@shared/schemas/sources'
import { api } from '@/api/client'

export const useSourcesStore = defineStore('sources', () => {
  const sources = ref<Source[]>([])

  async function load() {
    sources.value = (await api.get<{ sources: Source[] }>('/api/sources')).sources
    return sources.value
  }

  async function create(body: CreateSourceBody) {
    const { source } = await api.post<{ source: Source }>('/api/sources', body)
    sources.value = [...sources.value, source]
    return source
  }

  async function update(id: number, body: UpdateSourceBody) {
    const { source } = await api.patch<{ source: Source }>(`/api/sources/${id}`, body)
    sources.value = sources.value.map((s) => (s.id === id ? source : s))
  }

  async function remove(id: number) {
    await api.delete(`/api/sources/${id}`)
    sources.value = sources.value.filter((s) => s.id !== id)
  }

  return { sources, load, create, update, remove }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useSourcesStore, import.meta.hot))
