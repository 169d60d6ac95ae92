// music-metadata's common tags flattened to strings for display.
import type { ICommonTagsResult } from 'music-metadata'

function text(v: unknown): string | null {
  if (typeof v === 'string') return v
  if (typeof v === 'number' && Number.isFinite(v)) return String(v)
  if (v && typeof v === 'object' && 'text' in v && typeof (v as { text: unknown }).text === 'string')
    return (v as { text: string }).text
  return null
}

/** Strings stay, numbers become strings, lists join with "; ", {no, of} becomes "no/of"; pictures and empty values are dropped. */
export function flattenTags(common: ICommonTagsResult): Record<string, string> {
  const out: Record<string, string> = {}
  for (const [k, v] of Object.entries(common)) {
    if (k === 'picture' || v === undefined || v === null) continue
    let s: string | null
    if (Array.isArray(v))
      s = v
        .map(text)
        .filter((x): x is string => !!x)
        .join('; ')
    else if (typeof v === 'object' && 'no' in v) {
      const { no, of } = v as { no: number | null; of: number | null }
      s = no === null ? null : of === null ? String(no) : `${no}/${of}`
    } else s = text(v)
    if (s) out[k] = s
  }
  return out
}

// music-metadata names of LIST/INFO ids (its RIFF INFO map). It decodes INFO as Latin-1 only,
// so UTF-8 text (what ffprobe also shows) comes out garbled there; our INFO reading wins.
const INFO_TAGS: Record<string, string> = {
  INAM: 'title',
  IART: 'artist',
  IPRD: 'album',
  ICMT: 'comment',
  ICRD: 'date',
  IGNR: 'genre',
  ISFT: 'encodedby',
  IWRI: 'writer',
  IENG: 'engineer',
  ITCH: 'technician',
  IMED: 'media',
}

/** Tags with the INFO-derived values replaced (or filled in, e.g. for RF64 which music-metadata skips) from our parser. */
export function mergeInfoTags(tags: Record<string, string>, info: Record<string, string>): Record<string, string> {
  const out = { ...tags }
  for (const [id, key] of Object.entries(INFO_TAGS)) if (info[id]) out[key] = info[id]
  return out
}
