// Metadata chunks of a WAVE file: parsing for the reader and encoding for the writer.
// Layouts: LIST/INFO and LIST/adtl (labl, note) and 'cue ' from the 1991 RIFF/MCI
// specification; 'smpl' from the sampler chunk of the same family of documents;
// bext from EBU Tech 3285 (wav-bext.ts); iXML (wav-ixml.ts).
// Every parser is bounds-checked: malformed metadata is skipped, never fatal.
import type { Cue, FileMetadata, Loop } from '@shared/schemas/analysis'
import { parseBext } from './wav-bext'
import { parseIxml } from './wav-ixml'
import { FIELD_CAP, headBytes, MetaBudget, NUL, SPACE, trimEndCodes } from './wav-limits'

export { parseBext, encodeBext, bextSize, BEXT_OFFSETS, type BextInput } from './wav-bext'
export { parseIxml } from './wav-ixml'

export interface RawChunk {
  id: string
  data: Buffer
}

/** Drops trailing NULs (field terminators and padding). */
const stripNul = (s: string) => trimEndCodes(s, [NUL])

/** INFO text: UTF-8 when the bytes are valid UTF-8, else Latin-1 (the RIFF default code page). */
export function decodeText(b: Buffer): string {
  const nul = b.indexOf(0)
  const bytes = nul >= 0 ? b.subarray(0, nul) : b
  try {
    return new TextDecoder('utf-8', { fatal: true }).decode(bytes)
  } catch {
    return bytes.toString('latin1')
  }
}

/** Sub-chunks of a LIST payload after its 4-byte list type, as many as the budget allows (it notes the rest). */
export function listEntries(data: Buffer, budget = new MetaBudget(), label = 'LIST'): { id: string; data: Buffer }[] {
  const out: { id: string; data: Buffer }[] = []
  let p = 4
  while (p + 8 <= data.length) {
    if (!budget.entry(label, out.length)) break
    const id = data.toString('latin1', p, p + 4)
    const size = data.readUInt32LE(p + 4)
    const end = Math.min(data.length, p + 8 + size)
    out.push({ id, data: data.subarray(p + 8, end) })
    p = p + 8 + size + (size & 1)
  }
  return out
}

export function parseInfo(data: Buffer, budget = new MetaBudget()): Record<string, string> {
  const info: Record<string, string> = {}
  for (const e of listEntries(data, budget, 'LIST/INFO')) {
    // Decode no more than a field's worth (UTF-8 takes at most 4 bytes a character).
    if (e.data.length > 4 * FIELD_CAP)
      budget.note(`INFO ${e.id}: ${e.data.length} bytes, read the first ${4 * FIELD_CAP}`)
    const text = trimEndCodes(decodeText(headBytes(e.data, 4 * FIELD_CAP)), [NUL, SPACE])
    info[e.id] = budget.text(`INFO ${e.id}`, text)
  }
  return info
}

/** cue id -> label text from labl (preferred) or note entries. */
export function parseAdtl(data: Buffer, budget = new MetaBudget()): Map<number, string> {
  const labl = new Map<number, string>()
  const note = new Map<number, string>()
  for (const e of listEntries(data, budget, 'LIST/adtl')) {
    if (e.data.length < 4 || (e.id !== 'labl' && e.id !== 'note')) continue
    const text = stripNul(decodeText(headBytes(e.data.subarray(4), 4 * FIELD_CAP)))
    ;(e.id === 'labl' ? labl : note).set(
      e.data.readUInt32LE(0),
      budget.text(`cue label ${e.data.readUInt32LE(0)}`, text),
    )
  }
  for (const [id, t] of note) if (!labl.has(id)) labl.set(id, t)
  return labl
}

/** Cue points: the frame is dwSampleOffset (position within the data chunk for uncompressed audio). */
export function parseCue(data: Buffer, budget = new MetaBudget()): { id: number; frame: number }[] {
  if (data.length < 4) return []
  const n = budget.entries('cue', Math.min(data.readUInt32LE(0), Math.floor((data.length - 4) / 24)))
  const out: { id: number; frame: number }[] = []
  for (let i = 0, p = 4; i < n; i++, p += 24) out.push({ id: data.readUInt32LE(p), frame: data.readUInt32LE(p + 20) })
  return out
}

/** smpl loops; start and end are as stored (end is the last frame of the loop, inclusive, per the sampler chunk). */
export function parseSmpl(data: Buffer, budget = new MetaBudget()): Loop[] {
  if (data.length < 36) return []
  const n = budget.entries('smpl loops', Math.min(data.readUInt32LE(28), Math.floor((data.length - 36) / 24)))
  const out: Loop[] = []
  for (let i = 0, p = 36; i < n; i++, p += 24) {
    out.push({ type: data.readUInt32LE(p + 4), start: data.readUInt32LE(p + 8), end: data.readUInt32LE(p + 12) })
  }
  return out
}

/** The FileMetadata fields our own parsers fill (tags come from music-metadata in the reader). */
export function parseChunksMetadata(chunks: RawChunk[], budget = new MetaBudget()): Omit<FileMetadata, 'tags'> {
  const meta: Omit<FileMetadata, 'tags'> = {
    bext: null,
    ixml: null,
    info: {},
    cues: [],
    loops: [],
    dropped: budget.dropped,
  }
  const labels = new Map<number, string>()
  let cuePoints: { id: number; frame: number }[] = []
  for (const c of chunks) {
    if (c.id === 'bext' && !meta.bext) meta.bext = parseBext(c.data, budget)
    else if (c.id === 'iXML' && !meta.ixml) meta.ixml = parseIxml(stripNul(c.data.toString('utf8')), budget)
    else if (c.id === 'cue ' && cuePoints.length === 0) cuePoints = parseCue(c.data, budget)
    else if (c.id === 'smpl' && meta.loops.length === 0) meta.loops = parseSmpl(c.data, budget)
    else if (c.id === 'LIST' && c.data.length >= 4) {
      const type = c.data.toString('latin1', 0, 4)
      if (type === 'INFO') Object.assign(meta.info, parseInfo(c.data, budget))
      else if (type === 'adtl') for (const [id, t] of parseAdtl(c.data, budget)) labels.set(id, t)
    }
  }
  meta.cues = cuePoints.map((p): Cue => ({ id: p.id, frame: p.frame, label: labels.get(p.id) ?? null }))
  return meta
}

// ---- encoding (writer side) ----

/** A complete chunk: header, payload, pad byte when the payload is odd. */
export function chunk(id: string, payload: Buffer): Buffer {
  const h = Buffer.alloc(8)
  h.write(id, 0, 4, 'latin1')
  h.writeUInt32LE(payload.length, 4)
  return Buffer.concat(payload.length & 1 ? [h, payload, Buffer.alloc(1)] : [h, payload])
}

function textZ(s: string): Buffer {
  return Buffer.concat([Buffer.from(s, 'utf8'), Buffer.alloc(1)])
}

export function encodeInfo(info: Record<string, string>): Buffer {
  const parts = Object.entries(info).map(([id, v]) => {
    if (!/^[\x20-\x7e]{4}$/.test(id)) throw new Error(`INFO id must be four ASCII characters: "${id}"`)
    return chunk(id, textZ(v))
  })
  return chunk('LIST', Buffer.concat([Buffer.from('INFO', 'latin1'), ...parts]))
}

export function encodeCue(cues: { id: number; frame: number }[]): Buffer {
  const b = Buffer.alloc(4 + 24 * cues.length)
  b.writeUInt32LE(cues.length, 0)
  cues.forEach((c, i) => {
    const p = 4 + 24 * i
    b.writeUInt32LE(c.id, p) // dwName
    b.writeUInt32LE(c.frame, p + 4) // dwPosition (play order position = sample position here)
    b.write('data', p + 8, 4, 'latin1') // fccChunk
    // dwChunkStart and dwBlockStart stay 0: no wavl list, uncompressed data
    b.writeUInt32LE(c.frame, p + 20) // dwSampleOffset
  })
  return chunk('cue ', b)
}

export function encodeAdtl(cues: { id: number; label?: string }[]): Buffer | null {
  const parts = cues
    .filter((c) => c.label !== undefined)
    .map((c) => {
      const id = Buffer.alloc(4)
      id.writeUInt32LE(c.id)
      return chunk('labl', Buffer.concat([id, textZ(c.label ?? '')]))
    })
  return parts.length ? chunk('LIST', Buffer.concat([Buffer.from('adtl', 'latin1'), ...parts])) : null
}

export function encodeSmpl(loops: { start: number; end: number; type?: number }[], sampleRate: number): Buffer {
  const b = Buffer.alloc(36 + 24 * loops.length)
  b.writeUInt32LE(Math.round(1e9 / sampleRate), 8) // dwSamplePeriod in nanoseconds
  b.writeUInt32LE(60, 12) // dwMIDIUnityNote: middle C
  b.writeUInt32LE(loops.length, 28)
  loops.forEach((l, i) => {
    const p = 36 + 24 * i
    b.writeUInt32LE(i, p) // dwIdentifier
    b.writeUInt32LE(l.type ?? 0, p + 4)
    b.writeUInt32LE(l.start, p + 8)
    b.writeUInt32LE(l.end, p + 12)
  })
  return chunk('smpl', b)
}
