import { ref } from 'vue'
import { ApiError } from '@/api/client'

/** Runs an action, keeping its busy flag and the server's error sentence for the view. */
export function useAsync() {
  const busy = ref(false)
  const error = ref<string | null>(null)
  async function run<T>(fn: () => Promise<T>): Promise<T | undefined> {
    busy.value = true
    error.value = null
    try {
      return await fn()
    } catch (e) {
      error.value = e instanceof ApiError ? e.message : e instanceof Error ? e.message : String(e)
      return undefined
    } finally {
      busy.value = false
    }
  }
  return { busy, error, run }
}
