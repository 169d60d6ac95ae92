import { acceptHMRUpdate, defineStore } from 'pinia'
import { computed, ref, shallowRef, watch, watchEffect } from 'vue'
import type { Take } from '@shared/schemas/takes'
import { applyGains, wireMedia } from '@/composables/use-audio-chain'

/** Everyone auditions at this loudness when even level is on (EBU R 128's programme level). */
export const EVEN_LEVEL_TARGET_LUFS = -23
/** Highest true peak allowed after the even-level gain, so the output never passes 0 dBFS. */
export const EVEN_LEVEL_PEAK_CEILING_DBTP = -1
/** The master volume never starts above this, whatever was saved last time (hearing safety). */
export const MASTER_START_MAX = 0.5

const KEY = 'strayfield.audition'

/**
 * The gain that plays a take at the even level: target minus its integrated
 * loudness, but never so much that its true peak would pass the ceiling.
 */
export function evenLevelGainDb(
  integratedLufs: number | null | undefined,
  truePeakDbtp: number | null | undefined,
): number {
  if (integratedLufs === null || integratedLufs === undefined) return 0
  let g = EVEN_LEVEL_TARGET_LUFS - integratedLufs
  if (truePeakDbtp !== null && truePeakDbtp !== undefined) g = Math.min(g, EVEN_LEVEL_PEAK_CEILING_DBTP - truePeakDbtp)
  return Math.max(-60, Math.min(40, g))
}

/** One thing that can be auditioned: a take, a pack item, a shared item. */
export interface AuditionItem {
  /** Unique across kinds: "take:12", "pack-item:5". */
  key: string
  name: string
  url: string
  /** Measured levels for the even-level gain; null plays at unity (e.g. items already rendered to a target). */
  integratedLufs: number | null
  truePeakDbtp: number | null
  /** Where the name links to (the listening bench for a take). */
  href?: string
}

/** A take as something to audition (library rows, the logging sheet, the listening bench). */
export const takeItem = (t: Take): AuditionItem => ({
  key: `take:${t.id}`,
  name: t.title || t.filename,
  url: `/api/takes/${t.id}/audio`,
  integratedLufs: t.analysis?.loudness.integratedLufs ?? null,
  truePeakDbtp: t.analysis?.levels.truePeakDbtp ?? null,
  href: `/takes/${t.id}`,
})

/**
 * What is playing, everywhere: one player for lists (library, packs, share
 * page) with a queue for N / P and a cursor, or a page's own media element
 * lent to it (the listening bench), plus the listening settings: master
 * volume (starts low) and even level (on). The now-playing strip
 * (src/components/NowPlaying.vue) shows and drives it.
 */
export const useAuditionStore = defineStore('audition', () => {
  const saved = JSON.parse(localStorage.getItem(KEY) ?? '{}') as { master?: number; even?: boolean }
  const master = ref(Math.min(saved.master ?? 0.2, MASTER_START_MAX))
  const evenLevel = ref(saved.even ?? true)
  watch([master, evenLevel], () =>
    localStorage.setItem(KEY, JSON.stringify({ master: master.value, even: evenLevel.value })),
  )

  const queue = ref<AuditionItem[]>([])
  const current = ref<AuditionItem | null>(null)
  /** The row the keyboard is on in a list; Space plays it when it is not what is playing. */
  const cursor = ref<string | null>(null)
  const playing = ref(false)
  const time = ref(0)
  const duration = ref(0)

  let own: HTMLAudioElement | null = null
  const media = shallowRef<HTMLMediaElement | null>(null)
  /** The even-level gain applied to what plays now (0 with even level off or nothing measured). */
  const gainDb = computed(() =>
    evenLevel.value && current.value ? evenLevelGainDb(current.value.integratedLufs, current.value.truePeakDbtp) : 0,
  )
  /** Wires the element into Web Audio (inside the user's gesture) and sets its gains. */
  function ensureChain() {
    if (!media.value) return
    wireMedia(media.value)
    applyGains(media.value, gainDb.value, master.value)
  }
  watchEffect(() => applyGains(media.value, gainDb.value, master.value))

  const sync = () => {
    const el = media.value
    if (!el) return
    time.value = el.currentTime
    duration.value = Number.isFinite(el.duration) ? el.duration : duration.value
    playing.value = !el.paused && !el.ended
  }
  const EVENTS = [
    'timeupdate',
    'durationchange',
    'loadedmetadata',
    'play',
    'pause',
    'ended',
    'seeked',
    'emptied',
  ] as const
  function use(el: HTMLMediaElement) {
    if (media.value === el) return
    if (media.value) {
      for (const e of EVENTS) media.value.removeEventListener(e, sync)
      if (media.value === own) own.pause()
    }
    media.value = el
    for (const e of EVENTS) el.addEventListener(e, sync)
    sync()
  }
  function ownElement(): HTMLAudioElement {
    own ??= new Audio()
    own.preload = 'none'
    return own
  }

  /** The list N / P walk through (and Space starts from); the page that lists sounds sets it. */
  function setQueue(items: AuditionItem[]) {
    queue.value = items
  }

  /** Plays an item from the start (or pauses it when it is the one playing). */
  function play(item: AuditionItem) {
    const el = ownElement()
    use(el)
    cursor.value = item.key
    if (current.value?.key === item.key && el.src.endsWith(item.url)) {
      void toggle()
      return
    }
    current.value = item
    time.value = 0
    duration.value = 0
    el.src = item.url
    ensureChain()
    void el.play().catch(() => undefined)
  }

  async function toggle() {
    const el = media.value
    if (!el || !current.value) {
      const first = queue.value.find((i) => i.key === cursor.value) ?? queue.value[0]
      if (first) play(first)
      return
    }
    if (el.paused) {
      ensureChain()
      await el.play().catch(() => undefined)
    } else el.pause()
  }

  /** Space: the cursor's row when the cursor has moved off what is playing, else play/pause. */
  function space() {
    const lent = media.value !== null && media.value !== own
    const atCursor =
      cursor.value && cursor.value !== current.value?.key ? queue.value.find((i) => i.key === cursor.value) : undefined
    if (atCursor && !lent) play(atCursor)
    else void toggle()
  }

  /**
   * N / P: the next or previous item of the queue after what plays, played at
   * once. With nothing played yet, the first press plays the cursor's row (or
   * the first), so N, N, P hears the first, the second, then the first again.
   */
  function step(dir: 1 | -1) {
    const list = queue.value
    if (!list.length) return
    const i = list.findIndex((x) => x.key === current.value?.key)
    const next = i < 0 ? (list.find((x) => x.key === cursor.value) ?? list[0]) : list[i + dir]
    if (next) play(next)
  }

  function seek(seconds: number) {
    const el = media.value
    if (!el) return
    el.currentTime = Math.max(0, Math.min(seconds, Number.isFinite(el.duration) ? el.duration : seconds))
    sync()
  }

  function stop() {
    media.value?.pause()
  }

  /**
   * A page with its own media element (the listening bench) lends it here so
   * the strip shows and controls it; give it back with detach on unmount.
   */
  function attach(el: HTMLMediaElement, item: AuditionItem) {
    use(el)
    current.value = item
    ensureChain()
  }
  function detach(el: HTMLMediaElement) {
    if (media.value !== el) return
    for (const e of EVENTS) el.removeEventListener(e, sync)
    media.value = null
    current.value = null
    playing.value = false
    time.value = 0
    duration.value = 0
  }

  return {
    master,
    evenLevel,
    queue,
    current,
    cursor,
    playing,
    time,
    duration,
    gainDb,
    setQueue,
    play,
    toggle,
    space,
    step,
    seek,
    stop,
    attach,
    detach,
  }
})

if (import.meta.hot) import.meta.hot.accept(acceptHMRUpdate(useAuditionStore, import.meta.hot))
