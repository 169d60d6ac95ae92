// iXML chunk: a small tolerant extractor for the top-level BWFXML fields we show.
// Recorders write iXML by hand-rolled templates, so we only need elements, text,
// entities, comments and CDATA; no XML package in the dependency tree does less.
import type { Ixml } from '@shared/schemas/analysis'
import { FIELD_CAP, MetaBudget } from './wav-limits'

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
  return s.replace(
    /[<>&"']/g,
    (c) => `&${({ '<': 'lt', '>': 'gt', '&': 'amp', '"': 'quot', "'": 'apos' } as const)[c as '<']};`,
  )
}

type Field = (typeof FIELDS)[number]
const isField = (name: string): name is Field => (FIELDS as readonly string[]).includes(name)

/** Where `needle` starts at or after `from`, or the end of `doc` when it never does (an unclosed construct runs to the end). */
function endOf(doc: string, needle: string, from: number): number {
  const at = doc.indexOf(needle, from)
  return at < 0 ? doc.length : at
}

/**
 * Text of the document's second-level elements (children of the root, BWFXML), first occurrence wins.
 * One forward scan: every step moves past what it looked at (indexOf from the current place), so the
 * time is linear in the document, whatever its shape; no regular expression can backtrack here. Each
 * field keeps at most FIELD_CAP characters, and so does `raw`; the budget notes what was cut.
 */
export function parseIxml(raw: string, budget = new MetaBudget()): Ixml {
  const found: Partial<Record<Field, string>> = {}
  let depth = 0
  let open: { name: Field; parts: string[]; size: number; seen: number } | null = null
  // Text inside the open field: entities decoded per run (CDATA is taken as it is).
  const add = (text: string, decode: boolean) => {
    if (!open) return
    open.seen += text.length
    if (open.size > FIELD_CAP) return
    const t = decode ? decodeEntities(text.slice(0, FIELD_CAP + 1)) : text.slice(0, FIELD_CAP + 1)
    open.parts.push(t)
    open.size += t.length
  }
  let i = 0
  while (i < raw.length) {
    const lt = raw.indexOf('<', i)
    if (lt < 0) {
      add(raw.slice(i), true)
      break
    }
    if (lt > i) add(raw.slice(i, lt), true)
    if (raw.startsWith('<!--', lt)) {
      i = endOf(raw, '-->', lt + 4) + 3
    } else if (raw.startsWith('<?', lt)) {
      i = endOf(raw, '?>', lt + 2) + 2
    } else if (raw.startsWith('<![CDATA[', lt)) {
      const end = endOf(raw, ']]>', lt + 9)
      add(raw.slice(lt + 9, end), false)
      i = end + 3
    } else if (raw.startsWith('<!', lt)) {
      i = endOf(raw, '>', lt + 2) + 1
    } else {
      const gt = raw.indexOf('>', lt + 1)
      if (gt < 0) break // an unclosed tag: nothing after it is markup we can read
      i = gt + 1
      const close = raw[lt + 1] === '/'
      let n = lt + (close ? 2 : 1)
      const nameStart = n
      if (!/[A-Za-z_]/.test(raw[n] ?? '')) {
        add(raw.slice(lt, gt + 1), true) // not a tag: '<' in text, as the old reader treated it
        continue
      }
      while (n < gt && /[\w.:-]/.test(raw[n])) n++
      const up = raw.slice(nameStart, n).toUpperCase()
      if (close) {
        depth = Math.max(0, depth - 1)
        if (open && depth === 1 && up === open.name) {
          found[open.name] ??= budget.text(`iXML ${open.name}`, open.parts.join('').trim(), open.seen)
          open = null
        }
      } else if (raw[gt - 1] === '/') {
        if (depth === 1 && isField(up)) found[up] ??= ''
      } else {
        if (depth === 1 && !open && isField(up)) open = { name: up, parts: [], size: 0, seen: 0 }
        depth++
      }
    }
  }
  return {
    project: found.PROJECT ?? null,
    scene: found.SCENE ?? null,
    take: found.TAKE ?? null,
    tape: found.TAPE ?? null,
    note: found.NOTE ?? null,
    raw: budget.text('iXML document', raw),
  }
}
