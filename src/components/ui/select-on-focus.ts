// A pre-filled name that is meant to be replaced ("Region 2", a tag being
// renamed): focusing the field selects all of it, and the first click in it
// selects all of it too, so typing replaces the suggestion instead of landing
// after it ("Region 2steady hum"). A later click places the caret as usual, so
// the name can still be edited rather than replaced.
import type { Directive } from 'vue'

type Field = HTMLInputElement | HTMLTextAreaElement
const fresh = new WeakSet<Field>()

const onFocus = (e: Event) => {
  const el = e.target as Field
  fresh.add(el)
  el.select()
}
// A press inside selected text collapses the selection only on mouseup (the
// browser waits to see whether the text is dragged away); taking that default
// once keeps the whole name selected. A press that placed a caret selects all again.
const onMouseUp = (e: Event) => {
  const el = e.target as Field
  if (!fresh.has(el)) return
  fresh.delete(el)
  e.preventDefault()
  if (el.selectionStart === el.selectionEnd) el.select()
}
const onInput = (e: Event) => fresh.delete(e.target as Field)

export const vSelectOnFocus: Directive<Field> = {
  mounted(el) {
    el.addEventListener('focus', onFocus)
    el.addEventListener('mouseup', onMouseUp)
    el.addEventListener('input', onInput)
  },
  beforeUnmount(el) {
    el.removeEventListener('focus', onFocus)
    el.removeEventListener('mouseup', onMouseUp)
    el.removeEventListener('input', onInput)
  },
}
