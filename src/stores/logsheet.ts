import { acceptHMRUpdate, defineStore } from 'pinia'
import type { BulkEditResponse } from '@shared/schemas/library'
import type { RemovedTake } from '@shared/schemas/removals'
import type { TakeSourceLink } from '@shared/schemas/sources'
import type { Take } from '@shared/schemas/takes'
import { api } from '@/api/client'

/** The logging sheet's writes: device links one take or many at a time, removing and restoring takes. */
export const useLogSheetStore = defineStore('logsheet', () => {
  const setLinks = async (takeId: number, sources: TakeSourceLink[]) =>
    (await api.patch<{ take: Take }>(`/api/takes/${takeId}`, { sources })).take

  /** Replaces the device links of every take in `ids` (one transaction on the server). */
  const setLinksOfMany = async (ids: number[], sources: TakeSourceLink[]) =>
    (await api.post<BulkEditResponse>('/api/takes/bulk', { ids, sources })).takes

  const remove = async (takeId: number) => (await api.delete<{ removed: RemovedTake }>(`/api/takes/${takeId}`)).removed
  const restore = (takeId: number) => api.post<{ ok: true }>(`/api/takes/${takeId}/restore`)
  const removed = async () => (await api.get<{ takes: RemovedTake[] }>('/api/removed-takes')).takes

  return { setLinks, setLinksOfMany, remove, restore, removed }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useLogSheetStore, import.meta.hot))
