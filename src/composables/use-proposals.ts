// Proposals of the instrument tools for the take on the bench (server/instrument/):
// one-shots at onsets, seamless loops and the takes a sweep falls apart into,
// kept until a person accepts, adjusts or rejects them. One list for the page,
// shared by the field strip's proposal lane and the proposals panel, so a
// proposal dragged on the strip is the one the list accepts.
import { ref } from 'vue'
import { api } from '@/api/client'
import { useBenchStore } from '@/stores/bench'
import type {
  LoopSuggestion,
  LoopSuggestionsResponse,
  OnsetSlice,
  OnsetSuggestionsResponse,
  SplitResponse,
  SplitSuggestion,
  SplitSuggestionsResponse,
} from '@shared/schemas/instrument'
import type { Region } from '@shared/schemas/library'
import type { Take } from '@shared/schemas/takes'

export type Proposal = { id: number; name: string } & (
  ({ kind: 'one-shot' } & OnsetSlice) | ({ kind: 'loop' } & LoopSuggestion) | ({ kind: 'split' } & SplitSuggestion)
)

const proposals = ref<Proposal[]>([])
const takeId = ref(0)
/** Takes made by the last accepted split(s) on this take, for the link to the logging sheet. */
const madeTakes = ref<Take[]>([])
/** One-shot regions accepted on this take since it was opened, for "add these one-shots to a pack". */
const acceptedOneShots = ref<Region[]>([])
/** Loop regions accepted with a crossfade (region id → ms), so the loop audition joins them as proposed. */
const loopCrossfades = ref<Record<number, number>>({})
let nextId = 1

type Found =
  ({ kind: 'one-shot' } & OnsetSlice) | ({ kind: 'loop' } & LoopSuggestion) | ({ kind: 'split' } & SplitSuggestion)

function show(id: number, found: Found[]) {
  if (takeId.value !== id) reset(id)
  const label = { 'one-shot': 'One-shot', loop: 'Loop', split: 'Take' }
  const count = { 'one-shot': 0, loop: 0, split: 0 }
  proposals.value = found.map((f) => ({ ...f, id: nextId++, name: `${label[f.kind]} ${++count[f.kind]}` }) as Proposal)
}

function reset(id: number) {
  takeId.value = id
  proposals.value = []
  madeTakes.value = []
  acceptedOneShots.value = []
  loopCrossfades.value = {}
}

export function useProposals() {
  const bench = useBenchStore()

  async function findOneShots(id: number, range: { startSeconds: number; endSeconds: number }) {
    const { slices } = await api.post<OnsetSuggestionsResponse>(`/api/takes/${id}/onset-suggestions`, range)
    show(
      id,
      slices.map((s) => ({ kind: 'one-shot' as const, ...s })),
    )
  }
  async function findLoops(id: number, range: { startSeconds: number; endSeconds: number }) {
    const { loops } = await api.post<LoopSuggestionsResponse>(`/api/takes/${id}/loop-suggestions`, range)
    show(
      id,
      loops.map((l) => ({ kind: 'loop' as const, ...l })),
    )
  }
  async function findSplits(id: number, opts: { minSegmentSeconds?: number; sensitivity?: number } = {}) {
    const { segments } = await api.post<SplitSuggestionsResponse>(`/api/takes/${id}/split-suggestions`, opts)
    show(
      id,
      segments.map((s) => ({ kind: 'split' as const, ...s })),
    )
  }

  const drop = (p: Proposal) => (proposals.value = proposals.value.filter((q) => q.id !== p.id))
  const clear = () => (proposals.value = [])
  /** Adjusting: the proposal's ends move (kept inside the take, at least 10 ms long). */
  function adjust(id: number, startSeconds: number, endSeconds: number) {
    const d = bench.take?.format?.durationSeconds ?? Infinity
    proposals.value = proposals.value.map((p) =>
      p.id === id
        ? {
            ...p,
            startSeconds: Math.max(0, Math.min(startSeconds, endSeconds - 0.01)),
            endSeconds: Math.min(d, Math.max(endSeconds, startSeconds + 0.01)),
          }
        : p,
    )
  }

  async function split(parts: Proposal[]) {
    const { takes } = await api.post<SplitResponse>(`/api/takes/${bench.take!.id}/split`, {
      segments: parts.map((p) => ({ startSeconds: p.startSeconds, endSeconds: p.endSeconds })),
    })
    madeTakes.value = [...madeTakes.value, ...takes]
    for (const p of parts) drop(p)
    await bench.loadHistory()
    return takes
  }

  async function asRegion(p: Proposal) {
    if (p.kind === 'split') return
    const region = await bench.addRegion(p.name, p.startSeconds, p.endSeconds, p.kind)
    if (p.kind === 'one-shot') acceptedOneShots.value = [...acceptedOneShots.value, region]
    if (p.kind === 'loop' && p.crossfadeMs > 0)
      loopCrossfades.value = { ...loopCrossfades.value, [region.id]: p.crossfadeMs }
    drop(p)
  }

  /** One-shots and loops become regions of that kind; a proposed take is split off on its own. */
  async function accept(p: Proposal) {
    if (p.kind === 'split') await split([p])
    else await asRegion(p)
  }

  /** Every proposal: the proposed takes in one split (all or nothing), the rest as regions. */
  async function acceptAll() {
    const parts = proposals.value.filter((p) => p.kind === 'split')
    if (parts.length) await split(parts)
    for (const p of proposals.value.filter((q) => q.kind !== 'split')) await asRegion(p)
  }

  return {
    proposals,
    madeTakes,
    acceptedOneShots,
    loopCrossfades,
    findOneShots,
    findLoops,
    findSplits,
    drop,
    clear,
    adjust,
    accept,
    acceptAll,
    reset,
  }
}
