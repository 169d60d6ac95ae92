import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref } from 'vue'

/** The takes the user is auditioning in a row (the last library page), for N / P. */
export const useQueueStore = defineStore('queue', () => {
  const ids = ref<number[]>([])
  const set = (list: number[]) => (ids.value = list)
  const step = (current: number, dir: 1 | -1): number | null => {
    const i = ids.value.indexOf(current)
    if (i < 0) return null
    return ids.value[i + dir] ?? null
  }
  return { ids, set, step }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useQueueStore, import.meta.hot))
