import { onBeforeUnmount, onMounted } from 'vue'

/**
 * True when the key goes to a focused button, link or similar control, whose
 * own action Enter and Space should trigger instead of a page shortcut.
 */
export function onControl(e: KeyboardEvent): boolean {
  const t = e.target as HTMLElement | null
  return !!t?.closest?.(
    'button, a[href], summary, [role=button], [role=link], [role=option], [role=checkbox], [role=tab], [role=menuitem], [role=slider]',
  )
}

/**
 * Page-wide keyboard shortcuts that stay quiet while the user types in a field.
 * A handler may return false to say "not mine": the key then keeps its usual effect.
 */
export function useKeys(map: Record<string, (e: KeyboardEvent) => void | boolean>) {
  const handler = (e: KeyboardEvent) => {
    const t = e.target as HTMLElement | null
    if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.isContentEditable || t.tagName === 'SELECT'))
      return
    if (e.ctrlKey || e.metaKey || e.altKey) return
    const key = e.key === ' ' ? 'Space' : e.key.length === 1 ? e.key.toLowerCase() : e.key
    // Enter and Space belong to a focused button or link (WCAG 2.1.1: the keyboard reaches every control).
    if (
      (key === 'Enter' || key === 'Space') &&
      t?.closest(
        'button, a[href], [role=button], [role=link], [role=menuitem], [role=option], [role=checkbox], [role=radio], [role=switch], [role=tab], summary, label',
      )
    )
      return
    const fn = map[key]
    if (fn && fn(e) !== false) e.preventDefault()
  }
  onMounted(() => window.addEventListener('keydown', handler))
  onBeforeUnmount(() => window.removeEventListener('keydown', handler))
}
