// Bounds on what a file's metadata may cost us. Every metadata chunk is
// recorder-written and untrusted: a 5 MB file can hold 500,000 INFO entries or
// a megabyte of spaces. Parsers here scan linearly, keep at most FIELD_CAP
// characters of any one text field, ENTRY_CAP entries of any one list and
// TOTAL_TEXT_CAP characters of text per take, and say what they dropped.

/** Characters kept of one text field (an INFO value, the coding history, the iXML document…). */
export const FIELD_CAP = 64 * 1024
/** Entries read from one LIST, cue or smpl chunk. */
export const ENTRY_CAP = 1024
/** Entries read per take, all lists together (INFO, adtl, cue, smpl). */
export const TOTAL_ENTRY_CAP = 4096
/** Characters of metadata text kept per take, all fields together. */
export const TOTAL_TEXT_CAP = 256 * 1024
/** Bytes of metadata chunks read per file, all chunks together (a chunk past it is skipped). */
export const TOTAL_CHUNK_BYTES = 32 * 1024 * 1024

/** Collects what was cut, in words a person can read on the take's page. */
export class MetaBudget {
  readonly dropped: string[] = []
  private left = TOTAL_TEXT_CAP
  private entriesLeft = TOTAL_ENTRY_CAP

  note(what: string): void {
    // The notes themselves are bounded too: a list of a million drops is one line per kind at most.
    if (this.dropped.length < 64 && !this.dropped.includes(what)) this.dropped.push(what)
  }

  /** The field as kept: at most FIELD_CAP characters and what is left of the take's total (`length`: the field's size before a reader cut it). */
  text(label: string, s: string, length = s.length): string {
    const keep = Math.min(FIELD_CAP, this.left)
    if (s.length > keep) {
      this.note(
        keep === 0
          ? `${label}: dropped (the take's ${TOTAL_TEXT_CAP / 1024} KiB of metadata text was used up)`
          : `${label}: ${length} characters, kept the first ${keep}`,
      )
      s = s.slice(0, keep)
    }
    this.left -= s.length
    return s
  }

  /** How many of `n` entries of one list to read (at most ENTRY_CAP, and what is left of the take's total), noting the rest. */
  entries(label: string, n: number): number {
    const keep = Math.min(n, ENTRY_CAP, this.entriesLeft)
    if (keep < n) this.note(`${label}: ${n} entries, read the first ${keep}`)
    this.entriesLeft -= keep
    return keep
  }

  /** Takes one entry of a list walked one by one; false once the list's or the take's share is used. */
  entry(label: string, readSoFar: number): boolean {
    if (readSoFar >= ENTRY_CAP || this.entriesLeft === 0) {
      this.note(`${label}: more than ${readSoFar} entries, read the first ${readSoFar}`)
      return false
    }
    this.entriesLeft--
    return true
  }
}

/** The first bytes of `b`, at most `max`, cut on a UTF-8 character boundary (so a capped field still decodes as UTF-8). */
export function headBytes(b: Buffer, max: number): Buffer {
  if (b.length <= max) return b
  let end = max
  while (end > 0 && (b[end] & 0xc0) === 0x80) end--
  return b.subarray(0, end)
}

/** Without the trailing run of the given character codes; a plain backwards scan (a regex anchored at $ can take quadratic time). */
export function trimEndCodes(s: string, codes: readonly number[]): string {
  let end = s.length
  while (end > 0 && codes.includes(s.charCodeAt(end - 1))) end--
  return end === s.length ? s : s.slice(0, end)
}

export const NUL = 0
export const SPACE = 0x20
