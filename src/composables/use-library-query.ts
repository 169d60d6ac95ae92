import { computed } from 'vue'
import { useRoute, useRouter, type LocationQuery } from 'vue-router'

/** Every library filter the URL can carry (the names of GET /api/takes). */
export const QUERY_KEYS = [
  'q',
  'sourceId',
  'sourceKind',
  'tag',
  'sessionId',
  'uploaderId',
  'sampleRate',
  'channels',
  'minDuration',
  'maxDuration',
  'minLufs',
  'maxLufs',
  'minTruePeak',
  'maxTruePeak',
  'minLra',
  'maxLra',
  'hum',
  'noteOutcome',
  'character',
  'status',
  'sort',
  'order',
  'page',
  'pageSize',
] as const
export type QueryKey = (typeof QUERY_KEYS)[number]
export type LibraryQuery = Partial<Record<QueryKey, string | string[]>>

function pick(q: LocationQuery): LibraryQuery {
  const out: LibraryQuery = {}
  for (const k of QUERY_KEYS) {
    const v = q[k]
    if (v === undefined || v === null || v === '') continue
    out[k] = Array.isArray(v) ? (v.filter((x) => x !== null) as string[]) : String(v)
  }
  return out
}

/** The library's whole query lives in the URL, so a search can be bookmarked and shared. */
export function useLibraryQuery() {
  const route = useRoute()
  const router = useRouter()
  const query = computed(() => pick(route.query))

  function set(patch: LibraryQuery, opts: { keepPage?: boolean } = {}) {
    const next: LibraryQuery = { ...query.value, ...patch }
    if (!opts.keepPage && !('page' in patch)) delete next.page
    for (const k of Object.keys(next) as QueryKey[]) {
      const v = next[k]
      if (v === undefined || v === '' || (Array.isArray(v) && !v.length)) delete next[k]
    }
    void router.replace({ query: { ...viewKeys(), ...next } })
  }
  // Keys that are not filters (the grouping) say how to look, not what to find: a new sort or a cleared search keeps them.
  const viewKeys = () =>
    Object.fromEntries(Object.entries(route.query).filter(([k]) => !(QUERY_KEYS as readonly string[]).includes(k)))
  const clear = () => void router.replace({ query: viewKeys() })
  const one = (k: QueryKey) => {
    const v = query.value[k]
    return Array.isArray(v) ? v[0] : v
  }
  const many = (k: QueryKey) => {
    const v = query.value[k]
    return v === undefined ? [] : Array.isArray(v) ? v : [v]
  }
  return { query, set, clear, one, many }
}

/** The library's count line. Where the server stopped counting the number is a floor, and a "+" says so. */
export function matchCountText(total: number, capped = false): string {
  const n = total.toLocaleString('en')
  return capped ? `${n}+ takes` : `${n} take${total === 1 ? '' : 's'}`
}

/** Keys that say how to list, not what to find. */
const LISTING = new Set<QueryKey>(['sort', 'order', 'page', 'pageSize'])

/** The query's filters (words included), without the keys that only say how to list. */
export const filterKeys = (query: LibraryQuery) => (Object.keys(query) as QueryKey[]).filter((k) => !LISTING.has(k))

/**
 * What an empty list says. Words alone that find nothing are most often a spelling (each word
 * matches the start of a word); with filters, a range too narrow or one filter too many.
 */
export function emptyListText(query: LibraryQuery): string {
  const words = (Array.isArray(query.q) ? query.q.join(' ') : (query.q ?? '')).trim()
  const filtered = filterKeys(query).some((k) => k !== 'q')
  if (words && !filtered)
    return `No take has words beginning with “${words}”. Check the spelling, or search for fewer words.`
  if (words)
    return `No take has words beginning with “${words}” and passes the filters. Clear a filter, or search for fewer words.`
  return 'No take matches these filters. Widen a range or clear a filter.'
}
