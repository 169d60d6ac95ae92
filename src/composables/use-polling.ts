import { onBeforeUnmount } from 'vue'

/** Calls `tick` every `ms` while `active()` says so; stops with the component. */
export function usePolling(tick: () => Promise<unknown>, active: () => boolean, ms = 1500) {
  let timer: ReturnType<typeof setTimeout> | null = null
  let stopped = false
  const loop = async () => {
    timer = null
    if (stopped) return
    if (active()) await tick().catch(() => undefined)
    timer = setTimeout(loop, ms)
  }
  const start = () => {
    if (!timer && !stopped) timer = setTimeout(loop, ms)
  }
  onBeforeUnmount(() => {
    stopped = true
    if (timer) clearTimeout(timer)
  })
  return { start }
}
