import type { Readable } from 'node:stream'

/** Bytes start..end of a stored file, both inclusive (as HTTP Range counts them). */
export interface ByteRange {
  start: number
  end: number
}

/**
 * Where audio, peaks and builds live for good, named by keys relative to the storage root
 * ("audio/ab/ab12….wav"). Two implementations hold the same contract (tests/core/storage-contract):
 * a local folder (local.ts) and an S3-compatible bucket (s3.ts).
 */
export interface BlobStore {
  readonly kind: 'local' | 's3'
  /** Stores a file from the local disk under `key`, replacing any object there (streamed, never in memory). */
  putFile(key: string, file: string): Promise<void>
  /** The object's bytes, or a range of them. Rejects with code ENOENT when there is no such key. */
  read(key: string, range?: ByteRange): Promise<Readable>
  /** The object's size, or null when there is no such key. */
  size(key: string): Promise<number | null>
  /** Deletes one object; a missing key is not an error. */
  remove(key: string): Promise<void>
  /** Every key under a prefix ending in "/", sorted. */
  list(prefix: string): Promise<string[]>
  /** Deletes every object under a prefix ending in "/". */
  removePrefix(prefix: string): Promise<void>
  /** A time-limited URL a browser may fetch the object from directly, or null when only the server can send it. */
  presign(key: string, opts: { expiresSeconds: number; downloadName?: string }): Promise<string | null>
}

export class BlobMissingError extends Error {
  readonly code = 'ENOENT'
  constructor(readonly key: string) {
    super(`no stored object ${key}`)
  }
}

/** Keys are relative, with "/" separators, and never climb out of the root. */
export function checkKey(key: string): string {
  if (!key || key.startsWith('/') || key.split(/[\\/]/).some((p) => p === '..' || p === ''))
    throw new Error(`bad storage key: ${key}`)
  return key.replace(/\\/g, '/')
}
