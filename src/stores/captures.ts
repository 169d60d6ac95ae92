import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'
import type { CaptureSession, CreateCaptureSessionBody, UpdateCaptureSessionBody } from '@shared/schemas/captures'
import { api } from '@/api/client'

export const useCapturesStore = defineStore('captures', () => {
  const sessions = ref<CaptureSession[]>([])
  const loaded = ref(false)

  async function load() {
    sessions.value = (await api.get<{ sessions: CaptureSession[] }>('/api/capture-sessions')).sessions
    loaded.value = true
  }

  const get = async (id: number) => (await api.get<{ session: CaptureSession }>(`/api/capture-sessions/${id}`)).session

  async function create(body: CreateCaptureSessionBody) {
    const { session } = await api.post<{ session: CaptureSession }>('/api/capture-sessions', body)
    sessions.value = [session, ...sessions.value]
    return session
  }

  async function update(id: number, body: UpdateCaptureSessionBody) {
    const { session } = await api.patch<{ session: CaptureSession }>(`/api/capture-sessions/${id}`, body)
    sessions.value = sessions.value.map((s) => (s.id === id ? session : s))
    return session
  }

  return { sessions, loaded, load, get, create, update }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useCapturesStore, import.meta.hot))
