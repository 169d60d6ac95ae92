import { onBeforeUnmount, onMounted } from 'vue'

/** Page-wide keyboard shortcuts that stay quiet while the user types in a field. */
export function useKeys(map: Record<string, (e: KeyboardEvent) => void>) {
  const handler = (e: KeyboardEvent) => {
    const t = e.target as HTMLElement | null
    if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.isContentEditable || t.tagName === 'SELECT')) return
    if (e.ctrlKey || e.metaKey || e.altKey) return
    const key = e.key === ' ' ? 'Space' : e.key.length === 1 ? e.key.toLowerCase() : e.key
    const fn = map[key]
    if (fn) {
      e.preventDefault()
      fn(e)
    }
  }
  onMounted(() => window.addEventListener('keydown', handler))
  onBeforeUnmount(() => window.removeEventListener('keydown', handler))
}
