// The field strip's spectrogram follows the visible time range: a short range
// (up to the server's excerpt limit) is requested as an excerpt at that range,
// a longer one shows the whole-take image (cached on the server) placed so its
// visible part lines up. Each answer says in X-Spectrogram-* headers what was
// actually rendered (the server may snap sizes and times); without them, what
// was asked for is taken as rendered.
import { onBeforeUnmount, ref, watch, type Ref } from 'vue'
import {
  MAX_EXCERPT_SECONDS,
  SPECTROGRAM_HEADERS as H,
  SPECTROGRAM_WIDTHS,
  snapEnd,
  snapStart,
} from '@shared/schemas/spectrogram'
import { fetchImage } from '@/api/client'
import type { FreqAxis, TimeRange } from '@/components/bench/strip-math'

export interface SpectrogramImage extends TimeRange, FreqAxis {
  url: string
  floorDb: number
  /** The start and end this image was requested with (null: the whole take). */
  asked: TimeRange | null
}

/** The server's defaults (server/audio/spectrogram.ts): log axis from 20 Hz, floor −110 dBFS. */
const DEFAULT_MIN_HZ = 20
const DEFAULT_FLOOR_DB = -110
const HEIGHT = 256
/** The server's menu of widths: the smallest that covers the box's device pixels. */
const snapWidth = (px: number) =>
  SPECTROGRAM_WIDTHS.find((w) => w >= px) ?? SPECTROGRAM_WIDTHS[SPECTROGRAM_WIDTHS.length - 1]
const num = (h: Headers, name: string, fallback: number) => {
  const v = Number(h.get(name))
  return h.has(name) && Number.isFinite(v) ? v : fallback
}

export function useSpectrogramView(
  takeId: Ref<number>,
  view: Ref<TimeRange>,
  boxWidth: Ref<number>,
  duration: Ref<number>,
  sampleRate: Ref<number>,
) {
  const image = ref<SpectrogramImage | null>(null)
  const failed = ref<string | null>(null)
  let timer: ReturnType<typeof setTimeout> | null = null
  let controller: AbortController | null = null
  let lastKey = ''

  async function load() {
    if (boxWidth.value < 50) return // not laid out yet
    const span = view.value.end - view.value.start
    const width = snapWidth(boxWidth.value * Math.min(2, window.devicePixelRatio || 1))
    // Times on the server's 10 ms grid, outward, so the image always covers the visible range.
    const asked =
      span <= MAX_EXCERPT_SECONDS
        ? { start: Math.max(0, snapStart(view.value.start)), end: Math.min(duration.value, snapEnd(view.value.end)) }
        : null
    if (asked && asked.end - asked.start > MAX_EXCERPT_SECONDS) asked.end = asked.start + MAX_EXCERPT_SECONDS
    const q = asked
      ? `start=${asked.start.toFixed(2)}&end=${asked.end.toFixed(2)}&width=${width}&height=${HEIGHT}`
      : `width=${width}&height=${HEIGHT}`
    const url = `/api/takes/${takeId.value}/spectrogram.png?${q}`
    if (url === lastKey) return
    lastKey = url
    controller?.abort()
    controller = new AbortController()
    try {
      const { blob, headers } = await fetchImage(url, controller.signal)
      const start = num(headers, H.start, asked?.start ?? 0)
      const end = num(headers, H.end, asked?.end ?? duration.value)
      const scale = headers.get(H.scale)
      const next: SpectrogramImage = {
        url: URL.createObjectURL(blob),
        start,
        end,
        minHz: num(headers, H.minHz, DEFAULT_MIN_HZ),
        maxHz: num(headers, H.maxHz, sampleRate.value / 2),
        floorDb: num(headers, H.floorDb, DEFAULT_FLOOR_DB),
        scale: scale === 'linear' ? 'linear' : 'log',
        asked,
      }
      if (image.value) URL.revokeObjectURL(image.value.url)
      image.value = next
      failed.value = null
    } catch (err) {
      if ((err as Error).name === 'AbortError') return
      lastKey = ''
      failed.value = (err as Error).message
    }
  }

  watch(
    [takeId, () => view.value.start, () => view.value.end, boxWidth],
    () => {
      if (timer) clearTimeout(timer)
      // Wait for the zoom or scroll to settle; the old image stays placed meanwhile.
      timer = setTimeout(() => void load(), image.value ? 180 : 0)
    },
    { immediate: true },
  )
  onBeforeUnmount(() => {
    if (timer) clearTimeout(timer)
    controller?.abort()
    if (image.value) URL.revokeObjectURL(image.value.url)
  })
  return { image, failed }
}
