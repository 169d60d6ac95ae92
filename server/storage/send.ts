import { pipeline } from 'node:stream/promises'
import type { Request, Response } from 'express'
import rangeParser from 'range-parser'
import type { BlobStore } from './storage'

export interface SendOptions {
  size: number
  headers: Record<string, string>
  /** Answers a Range outside the object (416) in the one error shape. */
  unsatisfiable: () => void
}

/**
 * Sends a stored object straight from the bucket with HTTP Range support (206, 416,
 * Accept-Ranges), one ranged GET per request, so seeking in a long take never fetches it whole.
 * A header of several ranges or one that cannot be parsed gets the whole object, as Express's
 * send does with the local file.
 */
export async function sendFromStore(store: BlobStore, key: string, req: Request, res: Response, opts: SendOptions) {
  const header = req.headers.range
  const parsed = header ? rangeParser(opts.size, header, { combine: true }) : -2
  if (parsed === -1) return opts.unsatisfiable()
  const one = Array.isArray(parsed) && parsed.length === 1 && parsed.type === 'bytes' ? parsed[0] : null
  res.set({ ...opts.headers, 'Accept-Ranges': 'bytes' })
  if (one) {
    res.status(206).set({
      'Content-Range': `bytes ${one.start}-${one.end}/${opts.size}`,
      'Content-Length': String(one.end - one.start + 1),
    })
  } else {
    res.status(200).set('Content-Length', String(opts.size))
  }
  if (req.method === 'HEAD') return void res.end()
  const body = await store.read(key, one ?? undefined)
  await pipeline(body, res)
}
