// Proposals of the instrument tools for one take (server/instrument/): one-shots
// at onsets and seamless loops, kept until accepted or rejected.
import { ref } from 'vue'
import { api } from '@/api/client'
import type {
  LoopSuggestion,
  LoopSuggestionsResponse,
  OnsetSlice,
  OnsetSuggestionsResponse,
} from '@shared/schemas/instrument'

export type Proposal = ({ kind: 'one-shot' } & OnsetSlice) | ({ kind: 'loop' } & LoopSuggestion)

export function useProposals() {
  const proposals = ref<Proposal[]>([])
  async function findOneShots(takeId: number, range: { startSeconds: number; endSeconds: number }) {
    const { slices } = await api.post<OnsetSuggestionsResponse>(`/api/takes/${takeId}/onset-suggestions`, range)
    proposals.value = slices.map((s) => ({ kind: 'one-shot' as const, ...s }))
  }
  async function findLoops(takeId: number, range: { startSeconds: number; endSeconds: number }) {
    const { loops } = await api.post<LoopSuggestionsResponse>(`/api/takes/${takeId}/loop-suggestions`, range)
    proposals.value = loops.map((l) => ({ kind: 'loop' as const, ...l }))
  }
  const drop = (p: Proposal) => (proposals.value = proposals.value.filter((q) => q !== p))
  const clear = () => (proposals.value = [])
  return { proposals, findOneShots, findLoops, drop, clear }
}
