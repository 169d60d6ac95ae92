import { reactive } from 'vue'
import * as tus from 'tus-js-client'
import type { ApiErrorBody } from '@shared/schemas/common'
import { ApiError, csrf } from '@/api/client'

export interface QueuedUpload {
  key: number
  name: string
  size: number
  state: 'waiting' | 'uploading' | 'done' | 'failed'
  progress: number
  error: string | null
  takeId: number | null
}

const PARALLEL = 3
/** Bytes per PATCH: each one a checkpoint the server has kept, however the connection ends. */
const CHUNK_BYTES = 32 * 2 ** 20
/** Retries after a dropped connection or a server restart before the item shows as failed. */
const RETRY_DELAYS_MS = [0, 1000, 3000, 5000, 10_000, 20_000, 30_000]

/** The server's one error shape from a tus answer, as the rest of the client shows errors. */
function uploadError(err: Error): ApiError {
  const res = (err as tus.DetailedError).originalResponse
  if (!res) return new ApiError(0, 'NETWORK', 'The connection to the server was lost; drop the file again to go on')
  let body: ApiErrorBody | null = null
  try {
    body = JSON.parse(res.getBody()) as ApiErrorBody
  } catch {
    /* not JSON: a generic sentence below */
  }
  const e = body?.error
  return new ApiError(
    res.getStatus(),
    e?.code ?? `HTTP_${res.getStatus()}`,
    e?.message ?? `Upload failed (${res.getStatus()})`,
    e?.details ?? {},
  )
}

/** The server's own refusal: a body in the one error shape (duplicate, not a WAV, too large, session gone…). */
function isRefusal(res: tus.HttpResponse): boolean {
  try {
    return typeof (JSON.parse(res.getBody()) as Partial<ApiErrorBody>).error?.code === 'string'
  } catch {
    return false
  }
}

/**
 * Whether tus-js-client sends again. A refusal is final: the same bytes get the same answer, and the
 * server has already dropped the upload (a retry would find its address gone, start a new upload and
 * send the whole file again, over and over). Tried again, as the protocol needs: no answer at all (the
 * network), a 5xx or 423 (locked) from the tus layer itself, and its 409 "Upload-Offset conflict"
 * (plain text), after which a HEAD finds the offset the server kept.
 */
function shouldRetry(err: Error): boolean {
  const res = (err as tus.DetailedError).originalResponse
  if (!res) return true
  const status = res.getStatus()
  if (isRefusal(res)) return false
  return status >= 500 || status === 423 || status === 409
}

/** Forgets the kept address of a refused file, so dropping it again starts afresh instead of asking for a removed upload. */
async function forget(upload: tus.Upload) {
  const storage = tus.defaultOptions.urlStorage
  for (const p of await upload.findPreviousUploads()) await storage.removeUpload(p.urlStorageKey)
}

/**
 * Sends dropped files a few at a time through the tus protocol, each with its own progress and
 * its own error. A file cut off (network, closed tab, reload) resumes where the server stopped:
 * tus-js-client keeps each upload's address in localStorage under a fingerprint of the capture
 * session and the file, so dropping the same file again goes on from the kept bytes.
 */
export function useUploadQueue(sessionId: () => number, onUploaded: (takeId: number) => void) {
  const items = reactive<QueuedUpload[]>([])
  const files = new Map<number, File>()
  const uploads = new Map<number, tus.Upload>()
  let next = 1

  function add(list: FileList | File[]) {
    for (const f of Array.from(list)) {
      const key = next++
      files.set(key, f)
      items.push({ key, name: f.name, size: f.size, state: 'waiting', progress: 0, error: null, takeId: null })
    }
    pump()
  }

  function pump() {
    const busy = items.filter((i) => i.state === 'uploading').length
    for (const item of items.filter((i) => i.state === 'waiting').slice(0, Math.max(0, PARALLEL - busy)))
      void start(item)
  }

  const finish = (item: QueuedUpload) => {
    files.delete(item.key)
    uploads.delete(item.key)
    pump()
  }

  async function start(item: QueuedUpload) {
    item.state = 'uploading'
    const file = files.get(item.key)!
    const session = sessionId()
    try {
      const token = await csrf()
      const upload = new tus.Upload(file, {
        endpoint: '/api/files',
        chunkSize: CHUNK_BYTES,
        retryDelays: RETRY_DELAYS_MS,
        onShouldRetry: shouldRetry,
        metadata: { captureSessionId: String(session), filename: file.name, filetype: file.type },
        headers: { 'x-csrf-token': token },
        // The same file dropped on another capture session is another upload.
        fingerprint: async (f: File) => ['strayfield', session, f.name, f.size, f.lastModified].join('|'),
        storeFingerprintForResuming: true,
        removeFingerprintOnSuccess: true,
        onProgress: (sent, total) => (item.progress = total ? sent / total : 0),
        onSuccess: ({ lastResponse }) => {
          const take = (JSON.parse(lastResponse.getBody()) as { take: { id: number } }).take
          item.state = 'done'
          item.progress = 1
          item.takeId = take.id
          onUploaded(take.id)
          finish(item)
        },
        onError: (err) => {
          item.state = 'failed'
          item.error = uploadError(err).message
          const res = (err as tus.DetailedError).originalResponse
          if (res && isRefusal(res)) void forget(upload).catch(() => undefined)
          finish(item)
        },
      })
      uploads.set(item.key, upload)
      const previous = await upload.findPreviousUploads()
      if (previous.length) upload.resumeFromPreviousUpload(previous[0])
      upload.start()
    } catch (e) {
      item.state = 'failed'
      item.error = e instanceof Error ? e.message : String(e)
      finish(item)
    }
  }

  function cancel(key: number) {
    const item = items.find((i) => i.key === key)
    const upload = uploads.get(key)
    if (upload && item?.state === 'uploading') {
      // Cancelling ends the upload on the server too, and forgets it here: nothing to resume.
      void upload.abort(true).catch(() => undefined)
      item.state = 'failed'
      item.error = 'Upload cancelled'
      finish(item)
    } else if (item && item.state === 'waiting') {
      item.state = 'failed'
      item.error = 'Cancelled'
      files.delete(key)
    }
  }

  const clearFinished = () => {
    for (let i = items.length - 1; i >= 0; i--) if (items[i].state === 'done') items.splice(i, 1)
  }

  return { items, add, cancel, clearFinished }
}
