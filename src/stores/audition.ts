import { acceptHMRUpdate, defineStore } from 'pinia'
import { ref, watch } from 'vue'

/** Everyone auditions at this loudness when even level is on (EBU R 128's programme level). */
export const EVEN_LEVEL_TARGET_LUFS = -23
/** Highest true peak allowed after the even-level gain, so the output never passes 0 dBFS. */
export const EVEN_LEVEL_PEAK_CEILING_DBTP = -1

const KEY = 'strayfield.audition'

/**
 * The gain that plays a take at the even level: target minus its integrated
 * loudness, but never so much that its true peak would pass the ceiling.
 */
export function evenLevelGainDb(integratedLufs: number | null | undefined, truePeakDbtp: number | null | undefined): number {
  if (integratedLufs === null || integratedLufs === undefined) return 0
  let g = EVEN_LEVEL_TARGET_LUFS - integratedLufs
  if (truePeakDbtp !== null && truePeakDbtp !== undefined) g = Math.min(g, EVEN_LEVEL_PEAK_CEILING_DBTP - truePeakDbtp)
  return Math.max(-60, Math.min(40, g))
}

/** Listening settings shared by the library and the listening bench: master volume (starts low) and even level (on). */
export const useAuditionStore = defineStore('audition', () => {
  const saved = JSON.parse(localStorage.getItem(KEY) ?? '{}') as { master?: number; even?: boolean }
  const master = ref(Math.min(saved.master ?? 0.2, 0.5))
  const evenLevel = ref(saved.even ?? true)
  watch([master, evenLevel], () => localStorage.setItem(KEY, JSON.stringify({ master: master.value, even: evenLevel.value })))
  return { master, evenLevel }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useAuditionStore, import.meta.hot))
