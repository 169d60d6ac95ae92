// Element Plus's select shows its placeholder in a <span>, not on its <input
// role=combobox>, so a select that has only a placeholder ("Source", "Tag")
// has no accessible name (WCAG 4.1.2; axe-core rule "label"). Until every
// such select carries its own aria-label, this names it from its placeholder,
// once, wherever it appears. A select with a label or aria-label is left alone.
function nameSelects(root: ParentNode) {
  for (const input of root.querySelectorAll<HTMLInputElement>('input.el-select__input:not([aria-label]):not([aria-labelledby])')) {
    if (input.id && document.querySelector(`label[for="${CSS.escape(input.id)}"]`)) continue
    const placeholder = input.closest('.el-select')?.querySelector('.el-select__placeholder.is-transparent')?.textContent?.trim()
    if (placeholder) input.setAttribute('aria-label', placeholder)
  }
}

export function nameSelectsFromPlaceholders(root: HTMLElement = document.body) {
  let queued = false
  const run = () => {
    queued = false
    nameSelects(root)
  }
  new MutationObserver(() => {
    if (!queued) {
      queued = true
      requestAnimationFrame(run)
    }
  }).observe(root, { childList: true, subtree: true })
  run()
}
