// Errors cross to and from worker threads and the build process as plain
// objects (an Error's class does not survive structured cloning): its name,
// message, Node's system error code (ENOENT…) and a WavFormatError's reason.
// The receiving side revives them, as one of the classes it knows by name or
// as a plain Error carrying the same fields.

export interface ErrorInfo {
  name: string
  message: string
  /** Node system error code such as ENOENT. */
  code?: string
  /** WavFormatError's reason. */
  reason?: string
}

export function errorInfo(err: unknown): ErrorInfo {
  if (!(err instanceof Error)) return { name: 'Error', message: String(err) }
  const e = err as NodeJS.ErrnoException & { reason?: unknown }
  return {
    name: e.name,
    message: e.message,
    ...(typeof e.code === 'string' ? { code: e.code } : {}),
    ...(typeof e.reason === 'string' ? { reason: e.reason } : {}),
  }
}

/** `known`: constructors of the classes the receiver tells apart, by error name. */
export function reviveError(e: ErrorInfo, known: Record<string, (e: ErrorInfo) => Error> = {}): Error {
  const make = known[e.name]
  if (make) return make(e)
  return Object.assign(new Error(e.message), {
    name: e.name,
    ...(e.code ? { code: e.code } : {}),
    ...(e.reason ? { reason: e.reason } : {}),
  })
}
