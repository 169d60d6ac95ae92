// A pass-through stream that hashes (SHA-256) and counts what flows through it,
// for copies that must know their content's hash the moment the last byte lands
// (uploads, backups) without reading the file a second time.
import { createHash } from 'node:crypto'
import { Transform } from 'node:stream'

export function hashingTap(): { tap: Transform; result: () => { size: number; sha256: string } } {
  const hash = createHash('sha256')
  let size = 0
  const tap = new Transform({
    transform(chunk: Buffer, _enc, next) {
      hash.update(chunk)
      size += chunk.length
      next(null, chunk)
    },
  })
  return { tap, result: () => ({ size, sha256: hash.digest('hex') }) }
}
