// What a share-link download request will be served, decided before anything is
// counted, with the same Range parser and the same rules as the file sender
// (Express's `send`: range-parser with `combine`, only headers starting
// `bytes=`, one range at a time). The route strips If-Range and the conditional
// headers first, so `send` never serves other bytes than planned here.
//
// Counting: a request is a new download (counted against the limit) unless it
// is a later resume of the last counted download: it starts past byte 0, that
// download did not finish, and it starts where that download stopped (at most
// RESUME_SLACK_BYTES before, for bytes the server wrote but the client never
// got). A Range the sender would ignore (a different unit or case, garbage,
// several ranges) or cannot satisfy answers 416 and counts nothing.
import parseRange from 'range-parser'

/** Bytes a server may have handed to the network that a cut-off client never received (socket buffers). */
export const RESUME_SLACK_BYTES = 16 * 1024 * 1024

export type RangePlan = { kind: 'whole' } | { kind: 'part'; start: number; end: number } | { kind: 'refuse' }

export function planRange(header: string | undefined, size: number): RangePlan {
  if (header === undefined) return { kind: 'whole' }
  if (!/^ *bytes=/.test(header)) return { kind: 'refuse' }
  const ranges = parseRange(size, header, { combine: true })
  if (ranges === -1 || ranges === -2 || ranges.length !== 1) return { kind: 'refuse' }
  return { kind: 'part', start: ranges[0].start, end: ranges[0].end }
}

/** Whether a request starting at `start` resumes the last counted download, which got to `openBytes`. */
export function isResume(start: number, openBytes: number | null): boolean {
  return start > 0 && openBytes !== null && start <= openBytes && start >= openBytes - RESUME_SLACK_BYTES
}

/** Request headers that would make the sender answer other bytes than planned (a 304, a stale If-Range). */
export const CONDITIONAL_HEADERS = [
  'if-range',
  'if-none-match',
  'if-modified-since',
  'if-match',
  'if-unmodified-since',
] as const
