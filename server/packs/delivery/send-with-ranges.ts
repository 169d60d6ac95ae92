// A stored file sent with HTTP Range support (players seek with ranges, download
// managers resume with them), through Express's own file sender so Ranges are
// parsed one way everywhere; only its 416 is reworded into the API's error shape.
import type { NextFunction, Response } from 'express'

export interface SendOptions {
  contentType: string
  /** Set: Content-Disposition attachment with this name. */
  downloadName?: string
  cache: string
}

/**
 * Sends a file through Express's send: Content-Length, Accept-Ranges, 206 for a satisfiable
 * Range, and a 416 in the API's error shape with Content-Range: bytes * /size otherwise.
 */
export function sendWithRanges(res: Response, next: NextFunction, file: string, size: number, o: SendOptions): void {
  const opts = { acceptRanges: true, headers: { 'Content-Type': o.contentType, 'Cache-Control': o.cache } }
  const done = rangeAwareDone(res, next, size, 'file')
  if (o.downloadName) res.download(file, o.downloadName, opts, done)
  else res.sendFile(file, opts, done)
}

/**
 * The callback for Express's file sender: a 416 becomes the API's error shape with
 * Content-Range: bytes * /size (`what` names the thing in the message), anything else goes on.
 */
export function rangeAwareDone(res: Response, next: NextFunction, size: number, what: string) {
  return (err?: Error & { status?: number }) => {
    if (!err || res.headersSent) return
    if (err.status === 416) {
      // send set the file's headers before it looked at the range: take them back.
      for (const h of ['Content-Disposition', 'Content-Type', 'ETag', 'Last-Modified']) res.removeHeader(h)
      res
        .status(416)
        .set('Content-Range', `bytes */${size}`)
        .json({
          error: {
            code: 'RANGE_NOT_SATISFIABLE',
            message: `The requested range lies outside the ${what}'s ${size} bytes`,
            details: { sizeBytes: size },
          },
        })
      return
    }
    next(err)
  }
}
