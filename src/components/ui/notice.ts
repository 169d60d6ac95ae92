// Notices that appear next to the action that caused them (not as toasts at
// the top of the screen), with an Undo where the action can be undone.
// Call `notice.done('Role changed', { undo })` from anywhere; TheNotices.vue
// (mounted once in App.vue) draws them. The anchor is the element given as
// `near`, or else the control the person last clicked or pressed Enter on.
import { reactive } from 'vue'

export type NoticeTone = 'done' | 'info' | 'warn' | 'error'
export interface NoticeOptions {
  /** The element to appear beside; defaults to the control last used. */
  near?: Element | null
  /** Undo the action; the notice offers an "Undo" button while it shows. */
  undo?: () => unknown
  /** How long it stays, in milliseconds (longer when it can be undone). */
  ms?: number
}
export interface Notice {
  id: number
  text: string
  tone: NoticeTone
  undo?: () => unknown
  /** Document coordinates of the notice's top-left corner. */
  top: number
  left: number
  /** The NoticeSlot.vue it shows in, in the page's flow, when its action sits in a row marked data-notice-slot. */
  slot?: string
}

export const noticeState = reactive({ items: [] as Notice[] })
const timers = new Map<number, ReturnType<typeof setTimeout>>()
let nextId = 1
let lastUsed: Element | null = null

/** Remembers the control a person last used, so a notice can stand beside it. */
export function trackLastUsedControl(doc: Document = document) {
  const remember = (e: Event) => {
    const t = e.target as Element | null
    lastUsed = t?.closest?.('button, a, [role=button], input, select, textarea, label, .el-select, .el-checkbox') ?? t
  }
  doc.addEventListener('pointerdown', remember, true)
  doc.addEventListener('keydown', (e) => (e.key === 'Enter' || e.key === ' ') && remember(e), true)
}

const WIDTH = 340
const MARGIN = 8

function place(anchor: Element | null): { top: number; left: number } {
  const vw = document.documentElement.clientWidth
  const width = Math.min(WIDTH, vw - 2 * MARGIN)
  if (!anchor || !anchor.isConnected) {
    // Nothing to stand beside (the control went away with its dialog): the lower left of the view.
    return { top: window.scrollY + window.innerHeight - 120, left: MARGIN }
  }
  const r = anchor.getBoundingClientRect()
  const below = r.bottom + 92 < window.innerHeight
  const top = window.scrollY + (below ? r.bottom + MARGIN : Math.max(MARGIN, r.top - 84))
  const left = window.scrollX + Math.min(Math.max(MARGIN, r.left), vw - width - MARGIN)
  return { top, left }
}

export function dismissNotice(id: number) {
  clearTimeout(timers.get(id))
  timers.delete(id)
  noticeState.items = noticeState.items.filter((n) => n.id !== id)
}

/** Keeps a notice while the pointer or focus is on it. */
export function holdNotice(id: number, hold: boolean) {
  clearTimeout(timers.get(id))
  if (!hold)
    timers.set(
      id,
      setTimeout(() => dismissNotice(id), 4000),
    )
}

export function showNotice(text: string, tone: NoticeTone = 'done', opts: NoticeOptions = {}): number {
  const id = nextId++
  const anchor = opts.near === undefined ? lastUsed : opts.near
  const slot = anchor?.isConnected
    ? (anchor.closest('[data-notice-slot]')?.getAttribute('data-notice-slot') ?? undefined)
    : undefined
  // One notice per place: a new one beside the same control (or in the same slot) replaces the old.
  const at = slot ? { top: 0, left: 0 } : place(anchor)
  for (const n of noticeState.items)
    if (slot ? n.slot === slot : !n.slot && Math.abs(n.top - at.top) < 4 && Math.abs(n.left - at.left) < 4)
      dismissNotice(n.id)
  noticeState.items.push({ id, text, tone, undo: opts.undo, ...at, slot })
  const ms = opts.ms ?? (opts.undo ? 10000 : tone === 'error' ? 8000 : 5000)
  timers.set(
    id,
    setTimeout(() => dismissNotice(id), ms),
  )
  return id
}

export const notice = {
  done: (text: string, opts?: NoticeOptions) => showNotice(text, 'done', opts),
  info: (text: string, opts?: NoticeOptions) => showNotice(text, 'info', opts),
  warn: (text: string, opts?: NoticeOptions) => showNotice(text, 'warn', opts),
  error: (text: string, opts?: NoticeOptions) => showNotice(text, 'error', opts),
}
