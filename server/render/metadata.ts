// What every rendered file carries: a bext chunk (EBU Tech 3285 version 2) and
// LIST/INFO title and keywords. The loudness fields of bext are filled with the
// values measured on the rendered samples, patched in before the file closes.
import type { BextInput } from '../audio/wav-bext'
import type { LevelReading } from './level-meter'

export const ORIGINATOR = 'Strayfield'

export interface ItemMetadata {
  /** INAM, and the bext description's first part. */
  title: string
  /** bext description (cut to its 256 characters). */
  description: string
  /** IKEY, joined with "; ". */
  keywords: string[]
  /** bext originator reference (32 characters), e.g. "SF-P3-V2-I7". */
  originatorReference: string
  /** Samples since midnight of the item's first frame (the source's bext time reference plus the offset), or 0. */
  timeReference: number
  /** Origination date and time (UTC). */
  createdAt: Date
}

/** EBU R 98 coding-history mode of a channel count. */
function mode(channels: number): string {
  return channels === 1 ? 'mono' : channels === 2 ? 'stereo' : `${channels}-channel`
}

export interface CodingLine {
  encoding: 'pcm' | 'float'
  sampleRate: number
  bits: number
  channels: number
  text: string
}

/** Coding history in the EBU R 98 line format: A=…,F=…,W=…,M=…,T=… each ended by CR LF. */
export function codingHistory(lines: CodingLine[]): string {
  return lines
    .map(
      (l) =>
        `A=${l.encoding === 'float' ? 'PCM-FLOAT' : 'PCM'},F=${l.sampleRate},W=${l.bits},M=${mode(l.channels)},T=${l.text}\r\n`,
    )
    .join('')
}

export function bextFor(m: ItemMetadata, history: string, levels: LevelReading | null): BextInput {
  const iso = m.createdAt.toISOString()
  return {
    description: m.description.slice(0, 256),
    originator: ORIGINATOR,
    originatorReference: m.originatorReference.slice(0, 32),
    originationDate: iso.slice(0, 10),
    originationTime: iso.slice(11, 19),
    timeReference: m.timeReference,
    loudnessValue: levels?.integratedLufs ?? null,
    loudnessRange: levels?.loudnessRangeLu ?? null,
    maxTruePeakLevel: levels?.truePeakDbtp ?? null,
    maxMomentaryLoudness: levels?.maxMomentaryLufs ?? null,
    maxShortTermLoudness: levels?.maxShortTermLufs ?? null,
    codingHistory: history,
  }
}

export function infoFor(m: ItemMetadata): Record<string, string> {
  const info: Record<string, string> = {
    INAM: m.title || 'Untitled',
    ISFT: ORIGINATOR,
    ICRD: m.createdAt.toISOString().slice(0, 10),
  }
  if (m.keywords.length) info.IKEY = m.keywords.join('; ')
  if (m.description) info.ICMT = m.description
  return info
}
