// iXML chunk: a small tolerant extractor for the top-level BWFXML fields we show.
// Recorders write iXML by hand-rolled templates, so we only need elements, text,
// entities, comments and CDATA; no XML package in the dependency tree does less.
import type { Ixml } from '@shared/schemas/analysis'

const FIELDS = ['PROJECT', 'SCENE', 'TAKE', 'TAPE', 'NOTE'] as const

const NAMED: Record<string, string> = { lt: '<', gt: '>', amp: '&', quot: '"', apos: "'" }

export function decodeEntities(s: string): string {
  return s.replace(/&(#x[0-9a-fA-F]+|#[0-9]+|[a-zA-Z]+);/g, (m, e: string) => {
    if (e[0] === '#') {
      const cp = e[1] === 'x' || e[1] === 'X' ? parseInt(e.slice(2), 16) : parseInt(e.slice(1), 10)
      return cp >= 0 && cp <= 0x10ffff && !(cp >= 0xd800 && cp <= 0xdfff) ? String.fromCodePoint(cp) : m
    }
    return NAMED[e] ?? m
  })
}

export function escapeXml(s: string): string {
  return s.replace(/[<>&"']/g, (c) => `&${({ '<': 'lt', '>': 'gt', '&': 'amp', '"': 'quot', "'": 'apos' } as const)[c as '<']};`)
}

/** Text of the document's second-level elements (children of the root, BWFXML), first occurrence wins. */
export function parseIxml(raw: string): Ixml {
  const found: Partial<Record<(typeof FIELDS)[number], string>> = {}
  // Comments and processing instructions carry no field text; CDATA becomes escaped text.
  const doc = raw
    .replace(/<!--[\s\S]*?(-->|$)/g, '')
    .replace(/<\?[\s\S]*?(\?>|$)/g, '')
    .replace(/<!\[CDATA\[([\s\S]*?)(\]\]>|$)/g, (_m, t: string) => escapeXml(t))
    .replace(/<![^>]*>/g, '')
  const tag = /<(\/?)([A-Za-z_][\w.:-]*)[^>]*?(\/?)>/g
  let depth = 0
  let open: { name: string; start: number } | null = null
  for (let m = tag.exec(doc); m; m = tag.exec(doc)) {
    const [whole, close, name, selfClose] = m
    if (close) {
      depth = Math.max(0, depth - 1)
      if (open && depth === 1 && name.toUpperCase() === open.name) {
        const text = doc.slice(open.start, m.index).replace(/<[^>]*>/g, '')
        found[open.name as (typeof FIELDS)[number]] ??= decodeEntities(text).trim()
        open = null
      }
    } else if (selfClose) {
      const up = name.toUpperCase()
      if (depth === 1 && (FIELDS as readonly string[]).includes(up)) found[up as (typeof FIELDS)[number]] ??= ''
    } else {
      const up = name.toUpperCase()
      if (depth === 1 && !open && (FIELDS as readonly string[]).includes(up)) open = { name: up, start: m.index + whole.length }
      depth++
    }
  }
  return {
    project: found.PROJECT ?? null,
    scene: found.SCENE ?? null,
    take: found.TAKE ?? null,
    tape: found.TAPE ?? null,
    note: found.NOTE ?? null,
    raw,
  }
}
