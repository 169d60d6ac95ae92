import type { ErrorRequestHandler, RequestHandler } from 'express'
import { ZodError } from 'zod'

/** An error the API reports as `{ error: { code, message, details } }` with its HTTP status. */
export class AppError extends Error {
  constructor(
    public status: number,
    public code: string,
    message: string,
    public details?: Record<string, unknown>,
  ) {
    super(message)
  }
}

export const notFound = (what: string, code = 'NOT_FOUND') => new AppError(404, code, `No ${what} with that id`)
export const forbidden = (message = 'Your role does not allow this') => new AppError(403, 'FORBIDDEN', message)

export function zodDetails(err: ZodError): Record<string, unknown> {
  return {
    issues: err.issues.map((i) => ({ path: i.path.join('.'), message: i.message })),
  }
}

export function describeZod(err: ZodError): string {
  return err.issues.map((i) => (i.path.length ? `${i.path.join('.')}: ${i.message}` : i.message)).join('; ')
}

export const apiNotFound: RequestHandler = (req) => {
  throw new AppError(404, 'ROUTE_NOT_FOUND', `No API route ${req.method} ${req.path}`)
}

const DRAIN_LIMIT = 64 * 1024 * 1024

/**
 * A request refused before its body was read (an upload to an unknown session,
 * or by a role that may not upload): when the body is small enough, read and
 * discard it first, so the client gets to see the answer instead of a broken
 * pipe; a large one is cut off once the answer is out.
 */
function afterDrain(req: Parameters<ErrorRequestHandler>[1], res: Parameters<ErrorRequestHandler>[2], send: () => void) {
  if (req.complete || req.readableEnded || !req.readable) return send()
  const announced = Number(req.headers['content-length'] ?? Infinity)
  if (announced > DRAIN_LIMIT) {
    res.set('Connection', 'close')
    send()
    res.on('finish', () => req.socket.destroy())
    return
  }
  req.on('end', send)
  req.on('error', send)
  req.resume()
}

/** The one error middleware: every failure leaves the server in the same shape. */
export const errorHandler: ErrorRequestHandler = (err, req, res, next) => {
  afterDrain(req, res, () => respond(err, req, res, next))
}

const respond: ErrorRequestHandler = (err, req, res, _next) => {
  if (res.headersSent) return
  if (err instanceof AppError) {
    res.status(err.status).json({ error: { code: err.code, message: err.message, details: err.details ?? {} } })
    return
  }
  if (err instanceof ZodError) {
    res.status(400).json({ error: { code: 'VALIDATION_FAILED', message: describeZod(err), details: zodDetails(err) } })
    return
  }
  // Errors thrown by body parsers and multer carry a status and a type.
  const status = typeof err?.status === 'number' ? err.status : typeof err?.statusCode === 'number' ? err.statusCode : 500
  if (status === 413 || err?.code === 'LIMIT_FILE_SIZE') {
    res.status(413).json({ error: { code: 'TOO_LARGE', message: 'The upload is larger than the server accepts', details: {} } })
    return
  }
  if (status >= 400 && status < 500) {
    res.status(status).json({ error: { code: 'BAD_REQUEST', message: String(err?.message ?? 'Bad request'), details: {} } })
    return
  }
  console.error(`[error] ${req.method} ${req.originalUrl}`, err)
  res.status(500).json({ error: { code: 'INTERNAL', message: 'Something went wrong on the server', details: {} } })
}
