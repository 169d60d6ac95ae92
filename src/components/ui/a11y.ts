// Element Plus's select shows its placeholder in a <span>, not on its <input
// role=combobox>, so a select that has only a placeholder ("Source", "Tag")
// has no accessible name (WCAG 4.1.2; axe-core rule "label"). Until every
// such select carries its own aria-label, this names it from its placeholder,
// once, wherever it appears. A select with a label or aria-label is left alone.
function nameSelects(root: ParentNode) {
  for (const input of root.querySelectorAll<HTMLInputElement>(
    'input.el-select__input:not([aria-label]):not([aria-labelledby])',
  )) {
    if (input.id && document.querySelector(`label[for="${CSS.escape(input.id)}"]`)) continue
    const placeholder = input
      .closest('.el-select')
      ?.querySelector('.el-select__placeholder.is-transparent')
      ?.textContent?.trim()
    if (placeholder) input.setAttribute('aria-label', placeholder)
  }
}

// Element Plus's scrollbar (tables, lists) scrolls a <div> the keyboard cannot
// reach. When one actually overflows it becomes a tab stop, so arrow keys
// scroll it (WCAG 2.1.1; axe-core rule "scrollable-region-focusable").
function reachScrollers(root: ParentNode) {
  for (const wrap of root.querySelectorAll<HTMLElement>('.el-scrollbar__wrap:not([tabindex])')) {
    if (wrap.scrollWidth > wrap.clientWidth + 1 || wrap.scrollHeight > wrap.clientHeight + 1) wrap.tabIndex = 0
  }
}

export function applyA11yFallbacks(root: HTMLElement = document.body) {
  let queued = false
  const run = () => {
    queued = false
    nameSelects(root)
    reachScrollers(root)
  }
  new MutationObserver(() => {
    if (!queued) {
      queued = true
      requestAnimationFrame(run)
    }
  }).observe(root, { childList: true, subtree: true })
  run()
}
