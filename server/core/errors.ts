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

// ---- file-system errors: fixed codes and words, never a server path ----

const FILE_ERRORS: Record<string, [status: number, code: string, words: string]> = {
  ENOENT: [404, 'FILE_MISSING', 'A file this needs is missing on the server; tell an admin'],
  ENOTDIR: [404, 'FILE_MISSING', 'A file this needs is missing on the server; tell an admin'],
  EISDIR: [500, 'FILE_UNREADABLE', 'A file this needs cannot be read on the server; tell an admin'],
  EACCES: [500, 'FILE_UNREADABLE', 'A file this needs cannot be read on the server; tell an admin'],
  EPERM: [500, 'FILE_UNREADABLE', 'A file this needs cannot be read on the server; tell an admin'],
  ENOSPC: [507, 'STORAGE_FULL', 'The server has no room left to store this; tell an admin'],
  EDQUOT: [507, 'STORAGE_FULL', 'The server has no room left to store this; tell an admin'],
  EMFILE: [503, 'SERVER_BUSY', 'The server has too many files open; try again in a moment'],
}

/** Whether err is a Node system error from the file system (it may carry a path). */
export function isFileSystemError(err: unknown): err is NodeJS.ErrnoException {
  const e = err as NodeJS.ErrnoException
  if (typeof e?.code !== 'string' || !/^E[A-Z]+$/.test(e.code)) return false
  // Known codes also when revived from a worker thread (which keeps the code, not the syscall).
  return e.code in FILE_ERRORS || 'syscall' in e || 'path' in e
}

/** The AppError a file-system error is answered with: a fixed code and sentence (log the original yourself). */
export function fileError(err: unknown): AppError {
  const known = FILE_ERRORS[(err as NodeJS.ErrnoException)?.code ?? '']
  if (known) return new AppError(known[0], known[1], known[2])
  return new AppError(500, 'FILE_ERROR', 'The server could not read or write a file; tell an admin')
}

/**
 * Error text fit to store where members read it (a failed take's error): a file-system error
 * becomes its fixed words; any absolute path left in other text is cut out.
 */
export function publicErrorText(text: string): string {
  const code = /^(E[A-Z]+):/.exec(text)?.[1]
  if (code) {
    const known = FILE_ERRORS[code]
    return known ? `${known[1]}: ${known[2]}` : 'FILE_ERROR: the server could not read or write a file; tell an admin'
  }
  return text.replace(/(['"]?)\/(?:[^\s'"/]+\/)+[^\s'",;:]*\1/g, '(a file on the server)')
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
function afterDrain(
  req: Parameters<ErrorRequestHandler>[1],
  res: Parameters<ErrorRequestHandler>[2],
  send: () => void,
) {
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
  if (isFileSystemError(err)) {
    // The path stays in the server log.
    console.error(`[error] ${req.method} ${req.originalUrl}: ${err.code} ${err.syscall ?? ''} ${err.path ?? ''}`)
    const e = fileError(err)
    res.status(e.status).json({ error: { code: e.code, message: e.message, details: {} } })
    return
  }
  // Errors thrown by body parsers and multer carry a status and a type.
  const status =
    typeof err?.status === 'number' ? err.status : typeof err?.statusCode === 'number' ? err.statusCode : 500
  if (status === 413 || err?.code === 'LIMIT_FILE_SIZE') {
    res
      .status(413)
      .json({ error: { code: 'TOO_LARGE', message: 'The upload is larger than the server accepts', details: {} } })
    return
  }
  if (status >= 400 && status < 500) {
    res
      .status(status)
      .json({ error: { code: 'BAD_REQUEST', message: String(err?.message ?? 'Bad request'), details: {} } })
    return
  }
  console.error(`[error] ${req.method} ${req.originalUrl}`, err)
  res.status(500).json({ error: { code: 'INTERNAL', message: 'Something went wrong on the server', details: {} } })
}
