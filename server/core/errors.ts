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

/** The one error middleware: every failure leaves the server in the same shape. */
export const errorHandler: ErrorRequestHandler = (err, req, res, _next) => {
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
