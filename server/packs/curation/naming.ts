// Output file names of pack items: a naming template filled per item, then made
// portable: ASCII letters, digits, '-' and '_' only, at most 80 characters
// before '.wav', unique within the pack (case-insensitively, since the common
// desktop file systems ignore case), never a name Windows reserves.
import {
  DEFAULT_NAMING_TEMPLATE,
  DEFAULT_REGION_NAMING_TEMPLATE,
  MAX_OUTPUT_NAME,
  NAMING_TOKENS,
  type NamingToken,
} from '@shared/schemas/packs'

/** Letters that Unicode decomposition does not reduce to ASCII (common practice transliterations). */
const SPECIAL: Record<string, string> = {
  ß: 'ss',
  ẞ: 'SS',
  æ: 'ae',
  Æ: 'AE',
  œ: 'oe',
  Œ: 'OE',
  ø: 'o',
  Ø: 'O',
  ł: 'l',
  Ł: 'L',
  đ: 'd',
  Đ: 'D',
  ð: 'd',
  Ð: 'D',
  þ: 'th',
  Þ: 'Th',
  ı: 'i',
  ħ: 'h',
  Ħ: 'H',
  ŋ: 'ng',
  Ŋ: 'NG',
  ĸ: 'k',
  ſ: 's',
  µ: 'u',
  '&': 'and',
  '+': 'plus',
  '%': 'pct',
  '°': 'deg',
  '#': 'no',
}

/** Device names Windows refuses as file names, whatever the extension (CON.wav too). */
const RESERVED = /^(con|prn|aux|nul|com[0-9]|lpt[0-9])$/i

/** Unicode text to the portable ASCII form: accents dropped, other characters and spaces to '_', runs collapsed. */
export function transliterate(text: string): string {
  let out = ''
  for (const ch of text.normalize('NFKD')) {
    if (/\p{M}/u.test(ch)) continue // combining marks: the accents NFKD split off
    if (/[A-Za-z0-9_-]/.test(ch)) out += ch
    else if (SPECIAL[ch] !== undefined) out += SPECIAL[ch]
    else out += '_'
  }
  return out
}

/**
 * A portable file name stem: transliterated, separator runs collapsed (a run holding a '-'
 * becomes '-', any other run '_'), no separator at either end, at most `max` characters,
 * never empty (falls back to "item") and never a reserved device name.
 */
export function sanitizeName(text: string, max = MAX_OUTPUT_NAME): string {
  let s = transliterate(text)
    .replace(/[-_]{2,}/g, (run) => (run.includes('-') ? '-' : '_'))
    .replace(/^[-_]+|[-_]+$/g, '')
  if (s.length > max) s = s.slice(0, max).replace(/[-_]+$/, '')
  if (!s) s = 'item'
  if (RESERVED.test(s)) s = `${s}_file`.slice(0, max)
  return s
}

/**
 * Makes each name unique in order: the first keeps its name, later ones get _2, _3…, cut so
 * the whole stays within `max`; compared without regard to case. Names must already be sanitised.
 */
export function uniquify(names: string[], max = MAX_OUTPUT_NAME): string[] {
  const taken = new Set<string>()
  // Reserve every name as given first, so an explicit "hum_2" is not taken by a generated suffix.
  const wanted = new Map<string, number>()
  for (const n of names) wanted.set(n.toLowerCase(), (wanted.get(n.toLowerCase()) ?? 0) + 1)
  return names.map((name) => {
    const key = name.toLowerCase()
    if (!taken.has(key)) {
      taken.add(key)
      return name
    }
    for (let k = 2; ; k++) {
      const suffix = `_${k}`
      const stem = name.slice(0, max - suffix.length).replace(/[-_]+$/, '') || 'item'
      const candidate = `${stem}${suffix}`
      const ck = candidate.toLowerCase()
      if (!taken.has(ck) && !wanted.has(ck)) {
        taken.add(ck)
        return candidate
      }
    }
  })
}

export interface NamingFacts {
  devices: { name: string; state: string }[]
  tags: string[]
  title: string
  filename: string
  sessionTitle: string
  sessionDate: string
  takeId: number
  kind: 'one-shot' | 'loop'
  packName: string
  /** Name of the region the item was cut from, or null (whole take, a hand-made range, or a region since deleted). */
  regionName: string | null
  /** 1-based position. */
  index: number
  /** Items in the pack, for the width of {index}. */
  count: number
}

export function tokenValues(f: NamingFacts): Record<NamingToken, string> {
  const width = Math.max(2, String(f.count).length)
  const firstWord = f.title.trim().split(/\s+/)[0] ?? ''
  return {
    device: f.devices[0]?.name ?? '',
    state: f.devices[0]?.state ?? '',
    kind: f.kind,
    descriptor: f.tags[0] ?? firstWord,
    region: f.regionName ?? '',
    session: f.sessionTitle,
    date: f.sessionDate.replace(/-/g, ''),
    index: String(f.index).padStart(width, '0'),
    take: String(f.takeId),
    title: f.title,
    file: f.filename.replace(/\.[^.]*$/, ''),
    pack: f.packName,
  }
}

/** Fills a template; unknown tokens (refused by the schema) are left out. The result still needs sanitizeName. */
export function fillTemplate(template: string, f: NamingFacts): string {
  const v = tokenValues(f)
  return template.replace(/\{([^}]*)\}/g, (_m, token: string) =>
    (NAMING_TOKENS as readonly string[]).includes(token) ? v[token as NamingToken] : '',
  )
}

/** The template an item is named by: the default one names an item cut from a named region by that region. */
export function templateFor(template: string, f: NamingFacts): string {
  return template === DEFAULT_NAMING_TEMPLATE && f.regionName?.trim() ? DEFAULT_REGION_NAMING_TEMPLATE : template
}

const VOWEL = /[aeiou]/i

/** Drops the last inner vowel of a word (never its first letter): "transformer" → "transformr". */
function dropVowel(word: string): string | null {
  for (let i = word.length - 1; i > 0; i--) if (VOWEL.test(word[i])) return word.slice(0, i) + word.slice(i + 1)
  return null
}

/**
 * A sanitised name shortened to `max` characters so it stays readable: the last word (the
 * index, or the word that tells near-identical names apart) is kept whole; the longest other words lose inner
 * vowels first, then letters from their ends, one at a time, down to three letters each; then
 * whole words are dropped from the middle. Common practice for short sampler displays.
 */
export function shortenName(name: string, max: number): string {
  if (name.length <= max) return name
  const parts = name.split(/([-_])/) // words at even places, separators between
  const words = parts.filter((_, i) => i % 2 === 0)
  const seps = parts.filter((_, i) => i % 2 === 1)
  const keepLast = words.length > 1 && words[words.length - 1].length <= max / 2 ? 1 : 0
  const join = () => words.reduce((out, w, i) => (i === 0 ? w : out + seps[i - 1] + w), '')
  const shrinkable = () =>
    words
      .map((w, i) => ({ w, i }))
      .filter(({ i }) => i < words.length - keepLast)
      .sort((a, b) => b.w.length - a.w.length || b.i - a.i)
  // 1. inner vowels of the longest words
  while (join().length > max) {
    const next = shrinkable().find(({ w }) => w.length > 3 && dropVowel(w) !== null)
    if (!next) break
    words[next.i] = dropVowel(next.w)!
  }
  // 2. letters off the end of the longest words, down to three letters each
  const trim = (shortest: number) => {
    while (join().length > max) {
      const [longest] = shrinkable()
      if (!longest || longest.w.length <= shortest) break
      words[longest.i] = longest.w.slice(0, -1)
    }
  }
  trim(3)
  // 3. whole words from the middle (the first and the last word stay): three letters read better than two
  while (join().length > max && words.length > 1 + keepLast) {
    const at = words.length - 1 - keepLast
    words.splice(at, 1)
    seps.splice(at - 1, 1)
  }
  // 4. what is left, down to a letter a word; the final cut only for a single long word
  trim(1)
  return sanitizeName(join(), max)
}

export interface NamingOptions {
  /** Longest name before `.wav` (a profile's limit); default MAX_OUTPUT_NAME. */
  maxLength?: number | null
}

/** The full and the delivered name of each item. */
export interface ItemName {
  /** Sanitised, before any length limit below MAX_OUTPUT_NAME. */
  full: string
  /** Within the limit and unique in the pack: the file name without `.wav`. */
  name: string
}

/** Output names of a pack's items in order: explicit names or the template, sanitised, shortened to the limit, then made unique. */
export function itemNames(
  template: string,
  items: { name: string | null; facts: NamingFacts }[],
  opts: NamingOptions = {},
): ItemName[] {
  const max = opts.maxLength ?? MAX_OUTPUT_NAME
  const full = items.map((i) => sanitizeName(i.name ?? fillTemplate(templateFor(template, i.facts), i.facts)))
  const names = uniquify(
    full.map((n) => shortenName(n, max)),
    max,
  )
  return full.map((f, k) => ({ full: f, name: names[k] }))
}

/** Output names (without .wav) of a pack's items in order: explicit names or the template, sanitised, then made unique. */
export function outputNames(
  template: string,
  items: { name: string | null; facts: NamingFacts }[],
  opts: NamingOptions = {},
): string[] {
  return itemNames(template, items, opts).map((n) => n.name)
}

/** The zip's download name: `<pack-name>_v<version>.zip`. */
export function buildFileName(packName: string, version: number): string {
  return `${sanitizeName(packName, 60)}_v${version}.zip`
}
