import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'
import type { Peaks } from '@shared/schemas/analysis'
import type { Take, TakePage } from '@shared/schemas/takes'
import { api, qs } from '@/api/client'

/** Takes: library pages, single takes and their waveform overviews. */
export const useTakesStore = defineStore('takes', () => {
  const page = ref<TakePage | null>(null)
  const loading = ref(false)
  let seq = 0

  /** One page of the library for a query; a slower earlier answer never overwrites a newer one. */
  async function search(query: Record<string, unknown>): Promise<TakePage | null> {
    const mine = ++seq
    loading.value = true
    try {
      const res = await api.get<TakePage>(`/api/takes${qs(query)}`)
      if (mine === seq) page.value = res
      return res
    } finally {
      if (mine === seq) loading.value = false
    }
  }

  const fetchPage = (query: Record<string, unknown>) => api.get<TakePage>(`/api/takes${qs(query)}`)
  const get = async (id: number) => (await api.get<{ take: Take }>(`/api/takes/${id}`)).take
  const peaks = (id: number, maxPoints = 8000) => api.get<Peaks>(`/api/takes/${id}/peaks?maxPoints=${maxPoints}`)
  const audioUrl = (id: number) => `/api/takes/${id}/audio`

  return { page, loading, search, fetchPage, get, peaks, audioUrl }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useTakesStore, import.meta.hot))
