import { acceptHMRUpdate, defineStore } from 'pinia'
import { computed, ref } from 'vue'
import type { Peaks } from '@shared/schemas/analysis'
import type { Take } from '@shared/schemas/takes'
import type { Comment, Region, RegionKind, HistoryEvent, UpdateTakeBody } from '@shared/schemas/library'
import type { NoteOutcome } from '@shared/schemas/notes'
import { api } from '@/api/client'

/** The listening bench: one take, its regions, its listening notes and its history. */
export const useBenchStore = defineStore('bench', () => {
  const take = ref<Take | null>(null)
  const peaks = ref<Peaks | null>(null)
  const regions = ref<Region[]>([])
  const comments = ref<Comment[]>([])
  const history = ref<HistoryEvent[]>([])
  const id = computed(() => take.value?.id ?? 0)

  async function open(takeId: number) {
    take.value = (await api.get<{ take: Take }>(`/api/takes/${takeId}`)).take
    peaks.value = null
    regions.value = []
    comments.value = []
    const tasks: Promise<unknown>[] = [loadRegions(), loadComments(), loadHistory()]
    if (take.value.status === 'ready')
      tasks.push(api.get<Peaks>(`/api/takes/${takeId}/peaks?maxPoints=8000`).then((p) => (peaks.value = p)))
    await Promise.all(tasks)
  }

  /**
   * Finer waveform peaks for a deep zoom on a long take (the first load holds
   * at most 8000 min/max pairs); loaded once, on demand.
   */
  let fineFor = 0
  async function loadFinePeaks() {
    const takeId = id.value
    if (!takeId || fineFor === takeId) return
    fineFor = takeId
    const fine = await api.get<Peaks>(`/api/takes/${takeId}/peaks?maxPoints=200000`)
    if (id.value === takeId) peaks.value = fine
  }

  const loadRegions = async () =>
    (regions.value = (await api.get<{ regions: Region[] }>(`/api/takes/${id.value}/regions`)).regions)
  const loadComments = async () =>
    (comments.value = (await api.get<{ comments: Comment[] }>(`/api/takes/${id.value}/comments`)).comments)
  const loadHistory = async () =>
    (history.value = (await api.get<{ events: HistoryEvent[] }>(`/api/takes/${id.value}/history`)).events)

  async function edit(patch: UpdateTakeBody) {
    take.value = (await api.patch<{ take: Take }>(`/api/takes/${id.value}`, patch)).take
    await loadHistory()
  }

  async function addRegion(name: string, startSeconds: number, endSeconds: number, kind?: RegionKind) {
    const { region } = await api.post<{ region: Region }>(`/api/takes/${id.value}/regions`, {
      name,
      startSeconds,
      endSeconds,
      ...(kind ? { kind } : {}),
    })
    regions.value = [...regions.value, region].sort((a, b) => a.startSeconds - b.startSeconds)
    await loadHistory()
    return region
  }

  async function removeRegion(regionId: number) {
    await api.delete(`/api/takes/${id.value}/regions/${regionId}`)
    regions.value = regions.value.filter((r) => r.id !== regionId)
  }

  /** A listening note (or a reply): only the fields that are set are sent. */
  async function comment(note: {
    body: string
    atSeconds?: number | null
    lowHz?: number | null
    highHz?: number | null
    outcome?: NoteOutcome | null
    regionId?: number | null
    parentId?: number | null
  }) {
    const set = Object.fromEntries(Object.entries(note).filter(([, v]) => v !== null && v !== undefined))
    await api.post(`/api/takes/${id.value}/comments`, set)
    await Promise.all([loadComments(), loadHistory()])
  }

  async function updateComment(commentId: number, patch: { body?: string; outcome?: NoteOutcome | null }) {
    await api.patch(`/api/takes/${id.value}/comments/${commentId}`, patch)
    await Promise.all([loadComments(), loadHistory()])
  }

  return {
    take,
    peaks,
    regions,
    comments,
    history,
    open,
    loadFinePeaks,
    edit,
    addRegion,
    removeRegion,
    comment,
    updateComment,
    loadHistory,
  }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useBenchStore, import.meta.hot))
