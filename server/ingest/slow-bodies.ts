// Slow clients cannot hold the server. Node's whole-request limit
// (`server.requestTimeout`) is one number for every route, and a 4 GiB take may
// stream for longer than any sane limit; so the server lifts Node's limit and
// this file puts it back per route: every request must have sent its whole body
// within `requestBodyTimeoutMs` (Node's own default, 5 minutes), except an
// accepted upload, which must keep up a minimum rate instead (less than
// `uploadMinBytesPerSecond` over a window of `uploadRateWindowMs` is cut off; the
// upload's partial file is removed by the storage engine as for any cut-off upload).
import type { Request, RequestHandler, Response } from 'express'
import { AppError } from '../core/errors'

const LIFT = Symbol('lift body deadline')
type Liftable = Request & { [LIFT]?: () => void }

/**
 * Answers 408 (when nothing was answered yet), then destroys the request: the client may still be
 * sending. Destroying the request (not only its socket) is what tells a reader of the body, such as
 * multer, that it ended, so the upload's partial file is removed.
 */
function cutOff(req: Request, res: Response, error: AppError) {
  const close = () => req.destroy()
  if (res.headersSent) return close()
  res.set('Connection', 'close')
  res.status(error.status).json({ error: { code: error.code, message: error.message, details: error.details ?? {} } })
  res.once('finish', close)
  setTimeout(close, 1000).unref()
}

/**
 * Every request: its body complete within `ms`, as Node's requestTimeout would have it. Only the
 * upload route lifts it (minimumRate below), and only once the request passed its access checks:
 * an anonymous or refused upload is held to the deadline like any other request.
 */
export function bodyDeadline(ms: number): RequestHandler {
  return (req, res, next) => {
    if (ms <= 0 || req.complete) return next()
    const timer = setTimeout(() => {
      if (req.complete) return
      cutOff(
        req,
        res,
        new AppError(408, 'REQUEST_TIMEOUT', `The request did not arrive whole within ${Math.round(ms / 1000)} s`),
      )
    }, ms)
    timer.unref()
    ;(req as Liftable)[LIFT] = () => clearTimeout(timer)
    res.once('close', () => clearTimeout(timer))
    next()
  }
}

/** The upload route (after its access checks): the deadline lifted; a body that sends less than `bytesPerSecond` over any window of `windowMs` is cut off. */
export function minimumRate(bytesPerSecond: number, windowMs: number): RequestHandler {
  return (req, res, next) => {
    if (bytesPerSecond <= 0 || req.complete) return next()
    ;(req as Liftable)[LIFT]?.()
    // The socket's byte count, not a 'data' listener: listening would start the body flowing before multer reads it.
    let last = req.socket.bytesRead
    const timer = setInterval(() => {
      if (req.complete) return clearInterval(timer)
      const got = req.socket.bytesRead - last
      last = req.socket.bytesRead
      if (got >= (bytesPerSecond * windowMs) / 1000) return
      clearInterval(timer)
      cutOff(
        req,
        res,
        new AppError(
          408,
          'UPLOAD_TOO_SLOW',
          `The upload sent ${got} bytes in ${Math.round(windowMs / 1000)} s, less than the ${Math.round(bytesPerSecond / 1024)} KB/s this server requires; nothing was kept`,
          {
            minBytesPerSecond: bytesPerSecond,
          },
        ),
      )
    }, windowMs)
    timer.unref()
    res.once('close', () => clearInterval(timer))
    next()
  }
}
