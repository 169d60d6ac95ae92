import * as tus from 'tus-js-client'
import type { Client } from './server'

/** The cookie header a signed-in supertest client sends, for tus-js-client (which has its own HTTP stack). */
export function cookieHeader(client: Client, url: string): string {
  const jar = (client.agent as unknown as { jar: { getCookies(a: object): { toValueString(): string } } }).jar
  return jar.getCookies({ domain: new URL(url).hostname, path: '/', secure: false, script: false }).toValueString()
}

/** tus-js-client's urlStorage kept in memory: what localStorage is to the browser, for one test. */
export function memoryUrlStorage(): tus.UrlStorage {
  const rows = new Map<string, tus.PreviousUpload & { urlStorageKey: string }>()
  let n = 0
  return {
    async findAllUploads() {
      return [...rows.values()]
    },
    async findUploadsByFingerprint(fp) {
      return [...rows.values()].filter((r) => r.urlStorageKey.startsWith(`${fp}::`))
    },
    async removeUpload(key) {
      rows.delete(key)
    },
    async addUpload(fp, upload) {
      const key = `${fp}::${++n}`
      rows.set(key, { ...upload, urlStorageKey: key })
      return key
    },
  }
}

export interface TusRun {
  status: number | null
  body: string
  offsets: number[]
  url: string | null
}

/**
 * Uploads `data` through tus as `client`, resuming a previous upload of the same fingerprint
 * when `urlStorage` has one; `abortAfter` stops the client once that many bytes were sent.
 */
export function tusUpload(
  client: Client,
  url: string,
  data: Buffer,
  opts: {
    urlStorage: tus.UrlStorage
    metadata: Record<string, string>
    abortAfter?: number
    chunkSize?: number
  },
): Promise<TusRun> {
  return new Promise((resolve, reject) => {
    const offsets: number[] = []
    const done = (status: number | null, body: string) => resolve({ status, body, offsets, url: upload.url })
    const upload: tus.Upload = new tus.Upload(data, {
      endpoint: `${url}/api/files`,
      chunkSize: opts.chunkSize ?? 2 ** 20,
      retryDelays: [],
      metadata: opts.metadata,
      headers: { cookie: cookieHeader(client, url), 'x-csrf-token': client.token },
      urlStorage: opts.urlStorage,
      storeFingerprintForResuming: true,
      removeFingerprintOnSuccess: true,
      onBeforeRequest(req) {
        if (req.getMethod() === 'PATCH') offsets.push(Number(req.getHeader('Upload-Offset')))
      },
      onProgress(sent) {
        if (opts.abortAfter !== undefined && sent >= opts.abortAfter) void upload.abort().then(() => done(null, ''))
      },
      onSuccess({ lastResponse }) {
        done(lastResponse.getStatus(), lastResponse.getBody())
      },
      onError(err) {
        const res = (err as tus.DetailedError).originalResponse
        if (res) done(res.getStatus(), res.getBody())
        else reject(err)
      },
    })
    upload
      .findPreviousUploads()
      .then((previous) => {
        if (previous.length) upload.resumeFromPreviousUpload(previous[0])
        upload.start()
      })
      .catch(reject)
  })
}
