import { createHash } from 'node:crypto'
import { createReadStream } from 'node:fs'

/** SHA-256 (hex) and size of a file, read as a stream. */
export async function hashFile(path: string): Promise<{ sha256: string; bytes: number }> {
  const h = createHash('sha256')
  let bytes = 0
  for await (const chunk of createReadStream(path, { highWaterMark: 1 << 20 })) {
    h.update(chunk as Buffer)
    bytes += (chunk as Buffer).length
  }
  return { sha256: h.digest('hex'), bytes }
}
