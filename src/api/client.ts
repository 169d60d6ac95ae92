// The one HTTP client of the app. Views call stores or composables, which call
// this; nothing else uses fetch. It keeps the CSRF token and turns every error
// answer into an ApiError with the server's code and sentence.
import type { ApiErrorBody } from '@shared/schemas/common'

export class ApiError extends Error {
  constructor(
    public status: number,
    public code: string,
    message: string,
    public details: Record<string, unknown> = {},
  ) {
    super(message)
  }
}

let csrfToken: string | null = null

async function fetchCsrf(): Promise<string> {
  const res = await fetch('/api/auth/csrf', { credentials: 'same-origin' })
  csrfToken = ((await res.json()) as { token: string }).token
  return csrfToken
}

/** The CSRF token, for requests made by other HTTP stacks (resumable uploads through tus-js-client). */
export const csrf = async (): Promise<string> => csrfToken ?? (await fetchCsrf())

/** Forget the token: the session id changed (sign-in, sign-out). */
export const resetCsrf = () => {
  csrfToken = null
}

async function toApiError(res: Response): Promise<ApiError> {
  try {
    const body = (await res.json()) as ApiErrorBody
    return new ApiError(res.status, body.error.code, body.error.message, body.error.details ?? {})
  } catch {
    return new ApiError(res.status, 'HTTP_' + res.status, `The server answered ${res.status} ${res.statusText}`)
  }
}

export async function request<T>(method: string, url: string, body?: unknown, retried = false): Promise<T> {
  const headers: Record<string, string> = {}
  const unsafe = method !== 'GET' && method !== 'HEAD'
  if (unsafe) headers['x-csrf-token'] = csrfToken ?? (await fetchCsrf())
  if (body !== undefined) headers['content-type'] = 'application/json'
  const res = await fetch(url, {
    method,
    headers,
    credentials: 'same-origin',
    body: body === undefined ? undefined : JSON.stringify(body),
  })
  if (res.ok) return (res.status === 204 ? undefined : await res.json()) as T
  const err = await toApiError(res)
  // A stale token (the session changed in another tab): fetch a new one once.
  if (err.code === 'CSRF_INVALID' && !retried) {
    resetCsrf()
    return request<T>(method, url, body, true)
  }
  throw err
}

export const api = {
  get: <T>(url: string) => request<T>('GET', url),
  post: <T>(url: string, body?: unknown) => request<T>('POST', url, body ?? {}),
  patch: <T>(url: string, body?: unknown) => request<T>('PATCH', url, body ?? {}),
  put: <T>(url: string, body?: unknown) => request<T>('PUT', url, body ?? {}),
  delete: <T>(url: string) => request<T>('DELETE', url),
}

/** An image with its response headers (the spectrogram says in headers what it actually rendered). */
export async function fetchImage(url: string, signal?: AbortSignal): Promise<{ blob: Blob; headers: Headers }> {
  const res = await fetch(url, { credentials: 'same-origin', signal })
  if (!res.ok) throw await toApiError(res)
  return { blob: await res.blob(), headers: res.headers }
}

/** A GET whose answer is bytes to decode (a loop's cycle for Web Audio). */
export async function fetchBytes(url: string, signal?: AbortSignal): Promise<ArrayBuffer> {
  const res = await fetch(url, { credentials: 'same-origin', signal })
  if (!res.ok) throw await toApiError(res)
  return res.arrayBuffer()
}

/** Query string from an object, leaving out empty values. */
export function qs(params: Record<string, unknown>): string {
  const sp = new URLSearchParams()
  for (const [k, v] of Object.entries(params)) {
    if (v === undefined || v === null || v === '') continue
    if (Array.isArray(v)) v.forEach((x) => sp.append(k, String(x)))
    else sp.set(k, String(v))
  }
  const s = sp.toString()
  return s ? `?${s}` : ''
}

export interface UploadHandle {
  promise: Promise<unknown>
  abort(): void
}

/** Multipart upload with progress (fetch has no upload progress; XMLHttpRequest does). */
export function upload(url: string, file: File, onProgress: (fraction: number) => void, field = 'file'): UploadHandle {
  const xhr = new XMLHttpRequest()
  const promise = (async () => {
    const token = csrfToken ?? (await fetchCsrf())
    return new Promise<unknown>((resolve, reject) => {
      xhr.open('POST', url)
      xhr.setRequestHeader('x-csrf-token', token)
      xhr.upload.onprogress = (e) => e.lengthComputable && onProgress(e.loaded / e.total)
      xhr.onload = () => {
        let body: unknown = null
        try {
          body = JSON.parse(xhr.responseText)
        } catch {
          /* not JSON: handled below */
        }
        if (xhr.status >= 200 && xhr.status < 300) return resolve(body)
        const e = (body as ApiErrorBody | null)?.error
        reject(
          new ApiError(
            xhr.status,
            e?.code ?? `HTTP_${xhr.status}`,
            e?.message ?? `Upload failed (${xhr.status})`,
            e?.details ?? {},
          ),
        )
      }
      xhr.onerror = () => reject(new ApiError(0, 'NETWORK', 'The connection to the server was lost'))
      xhr.onabort = () => reject(new ApiError(0, 'ABORTED', 'Upload cancelled'))
      const form = new FormData()
      form.append(field, file, file.name)
      xhr.send(form)
    })
  })()
  return { promise, abort: () => xhr.abort() }
}

/** A POST whose answer is a file: its bytes and the name from Content-Disposition (e.g. a modulation export). */
export async function postForFile(
  url: string,
  body: unknown,
): Promise<{ blob: Blob; fileName: string | null; headers: Headers }> {
  const send = async (token: string) =>
    fetch(url, {
      method: 'POST',
      headers: { 'x-csrf-token': token, 'content-type': 'application/json' },
      credentials: 'same-origin',
      body: JSON.stringify(body),
    })
  let res = await send(csrfToken ?? (await fetchCsrf()))
  if (!res.ok) {
    const err = await toApiError(res)
    if (err.code !== 'CSRF_INVALID') throw err
    resetCsrf()
    res = await send(await fetchCsrf())
    if (!res.ok) throw await toApiError(res)
  }
  const disposition = res.headers.get('content-disposition') ?? ''
  const name = /filename="?([^";]+)"?/u.exec(disposition)?.[1] ?? null
  return { blob: await res.blob(), fileName: name, headers: res.headers }
}
