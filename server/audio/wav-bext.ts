// Broadcast audio extension chunk, EBU Tech 3285 (v0 1997, v1 2001, v2 2011).
// Byte offsets from the Tech 3285 table of the BroadcastAudioExtension structure.
// Found while cross-checking (tests/audio/metadata-bext.test.ts): music-metadata 11 reads the
// v2 loudness fields as unsigned and unscaled, names 414/416/418 one field off (it has no
// LoudnessRange) and never reads 420. Its values are not used; this parser is the one we trust.
import type { Bext } from '@shared/schemas/analysis'
import { MetaBudget, NUL, SPACE, trimEndCodes } from './wav-limits'

export const BEXT_OFFSETS = {
  description: 0, // 256 chars
  originator: 256, // 32
  originatorReference: 288, // 32
  originationDate: 320, // 10, yyyy-mm-dd
  originationTime: 330, // 8, hh:mm:ss
  timeReferenceLow: 338,
  timeReferenceHigh: 342,
  version: 346,
  umid: 348, // 64 bytes, v1+
  loudnessValue: 412, // int16 LUFS x100, v2
  loudnessRange: 414,
  maxTruePeakLevel: 416,
  maxMomentaryLoudness: 418,
  maxShortTermLoudness: 420,
  reserved: 422, // 180 bytes
  codingHistory: 602,
} as const
export const BEXT_FIXED_SIZE = 602
/** Tech 3285 v2: a loudness field that was not measured holds 0x7FFF. */
export const BEXT_UNUSED = 0x7fff

export interface BextInput {
  description?: string
  originator?: string
  originatorReference?: string
  originationDate?: string
  originationTime?: string
  timeReference?: number
  umid?: string
  loudnessValue?: number | null
  loudnessRange?: number | null
  maxTruePeakLevel?: number | null
  maxMomentaryLoudness?: number | null
  maxShortTermLoudness?: number | null
  codingHistory?: string
}

const LOUDNESS_KEYS = [
  'loudnessValue',
  'loudnessRange',
  'maxTruePeakLevel',
  'maxMomentaryLoudness',
  'maxShortTermLoudness',
] as const

/** Fixed-width ASCII field: stops at the first NUL, then drops trailing spaces/NULs. */
export function fieldString(b: Buffer, start: number, end: number): string {
  const s = b.toString('latin1', start, Math.min(end, b.length))
  const nul = s.indexOf('\0')
  return trimEndCodes(nul >= 0 ? s.slice(0, nul) : s, [NUL, SPACE])
}

export function parseBext(data: Buffer, budget = new MetaBudget()): Bext {
  // A short chunk (seen from old writers) reads as if zero-filled to the fixed size.
  const b = data.length >= BEXT_FIXED_SIZE ? data : Buffer.concat([data, Buffer.alloc(BEXT_FIXED_SIZE - data.length)])
  const o = BEXT_OFFSETS
  const version = b.readUInt16LE(o.version)
  let umid = ''
  if (version >= 1) {
    const u = b.subarray(o.umid, o.umid + 64)
    let end = u.length
    while (end > 0 && u[end - 1] === 0) end--
    umid = u.subarray(0, end).toString('hex')
  }
  const loud = (at: number): number | null => {
    if (version < 2) return null
    const v = b.readInt16LE(at)
    return v === BEXT_UNUSED ? null : v / 100
  }
  return {
    description: fieldString(b, o.description, o.originator),
    originator: fieldString(b, o.originator, o.originatorReference),
    originatorReference: fieldString(b, o.originatorReference, o.originationDate),
    originationDate: fieldString(b, o.originationDate, o.originationTime),
    originationTime: fieldString(b, o.originationTime, o.timeReferenceLow),
    timeReference: b.readUInt32LE(o.timeReferenceLow) + b.readUInt32LE(o.timeReferenceHigh) * 2 ** 32,
    version,
    umid,
    loudnessValue: loud(o.loudnessValue),
    loudnessRange: loud(o.loudnessRange),
    maxTruePeakLevel: loud(o.maxTruePeakLevel),
    maxMomentaryLoudness: loud(o.maxMomentaryLoudness),
    maxShortTermLoudness: loud(o.maxShortTermLoudness),
    // Padding (NULs, spaces) is trimmed by a backwards scan first, then the text is capped.
    codingHistory: budget.text('bext coding history', fieldString(b, o.codingHistory, b.length)),
  }
}

/** Latin-1 bytes; characters outside it become '?', longer text is cut to the field. */
function putString(b: Buffer, at: number, width: number, s: string | undefined): void {
  if (!s) return
  const safe = s.replace(/[^\x00-\xff]/g, '?')
  b.write(safe.slice(0, width), at, width, 'latin1')
}

/** Payload size for a bext with this coding history (the chunk is reserved before data at this size). */
export function bextSize(codingHistory = ''): number {
  return BEXT_FIXED_SIZE + Buffer.byteLength(codingHistory.replace(/[^\x00-\xff]/g, '?'), 'latin1')
}

/** Version 2 payload. Loudness null -> 0x7FFF; values are rounded to 0.01 and clamped to int16. */
export function encodeBext(i: BextInput, size = bextSize(i.codingHistory)): Buffer {
  const b = Buffer.alloc(Math.max(size, BEXT_FIXED_SIZE))
  const o = BEXT_OFFSETS
  putString(b, o.description, 256, i.description)
  putString(b, o.originator, 32, i.originator)
  putString(b, o.originatorReference, 32, i.originatorReference)
  putString(b, o.originationDate, 10, i.originationDate)
  putString(b, o.originationTime, 8, i.originationTime)
  const t = Math.max(0, Math.floor(i.timeReference ?? 0))
  b.writeUInt32LE(t % 2 ** 32, o.timeReferenceLow)
  b.writeUInt32LE(Math.floor(t / 2 ** 32) % 2 ** 32, o.timeReferenceHigh)
  b.writeUInt16LE(2, o.version)
  if (i.umid) {
    if (!/^([0-9a-fA-F]{2}){0,64}$/.test(i.umid)) throw new Error('bext umid must be hex, at most 64 bytes')
    Buffer.from(i.umid, 'hex').copy(b, o.umid)
  }
  LOUDNESS_KEYS.forEach((k, n) => {
    const v = i[k]
    const q =
      v === null || v === undefined || !Number.isFinite(v)
        ? BEXT_UNUSED
        : Math.max(-32768, Math.min(32766, Math.round(v * 100)))
    b.writeInt16LE(q, o.loudnessValue + 2 * n)
  })
  putString(b, o.codingHistory, b.length - o.codingHistory, i.codingHistory)
  return b
}
