// Slow clients cannot hold the server (issue 9). The limits are shortened for the
// test (server config), the rules are the ones production runs: every request's
// body must arrive whole within the deadline, except an accepted upload, which is
// cut off when it sends less than the minimum rate over a window, leaving no
// partial file and no row.
import fs from 'node:fs'
import http from 'node:http'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, soxWav, uploadTake } from '../helpers/uploads'

let server: TestServer
let rec: Client
let sessionId: number

beforeAll(async () => {
  server = await startTestServer({
    requestBodyTimeoutMs: 1500,
    uploadMinBytesPerSecond: 8192,
    uploadRateWindowMs: 1000,
  })
  rec = await signedIn(server.url, 'recordist')
  sessionId = (await createSession(rec)).id
}, 60_000)
afterAll(async () => {
  await server?.stop()
})

const incoming = () => fs.readdirSync(path.join(server.ctx.config.storageDir, 'incoming'))
const takeCount = async () =>
  Number(
    (
      await server.ctx.db
        .selectFrom('takes')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )

/** Sends `head`, then `chunk` every `everyMs` until the server answers or closes; resolves with the status (0: closed without one). */
function trickle(p: string, headers: Record<string, string>, head: string, chunk: Buffer, everyMs: number) {
  return new Promise<{ status: number; body: string; bytesSent: number }>((resolve) => {
    let sent = 0
    const req = http.request(`${server.url}${p}`, { method: 'POST', headers })
    const done = (status: number, body = '') => {
      clearInterval(timer)
      req.destroy()
      resolve({ status, body, bytesSent: sent })
    }
    req.on('response', (res) => {
      let body = ''
      res.on('data', (d) => (body += d))
      res.on('end', () => done(res.statusCode ?? 0, body))
      res.on('error', () => done(res.statusCode ?? 0, body))
    })
    req.on('error', () => done(0))
    req.on('close', () => setTimeout(() => done(0), 200))
    req.write(head)
    const timer = setInterval(() => {
      if (req.destroyed) return
      req.write(chunk)
      sent += chunk.length
    }, everyMs)
  })
}

describe('slow clients', () => {
  it('an upload trickling below the minimum rate is cut off: no partial file, no row', async () => {
    const before = await takeCount()
    const cookie = (await rec.get('/api/auth/me')).request.cookies
    const boundary = 'sfslow'
    const res = await trickle(
      `/api/capture-sessions/${sessionId}/takes`,
      {
        'content-type': `multipart/form-data; boundary=${boundary}`,
        'content-length': String(10_000_000),
        'x-csrf-token': rec.token,
        cookie,
      },
      `--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="slow.wav"\r\nContent-Type: audio/wav\r\n\r\n`,
      Buffer.alloc(200, 1),
      100,
    )
    // 2 KB/s against a rule of 8 KB/s: cut off, with a 408 when the answer gets through.
    expect([0, 408]).toContain(res.status)
    if (res.status === 408) expect(JSON.parse(res.body).error.code).toBe('UPLOAD_TOO_SLOW')
    await expect.poll(() => incoming(), { timeout: 5000 }).toEqual([])
    expect(await takeCount()).toBe(before)
  }, 30_000)

  it('an anonymous body trickled to any route, the upload route included, is cut off at the deadline with 408', async () => {
    for (const p of ['/api/auth/login', `/api/capture-sessions/${sessionId}/takes`]) {
      const res = await trickle(
        p,
        { 'content-type': 'application/json', 'content-length': '100000' },
        '{"email":"',
        Buffer.from('aaaa'),
        200,
      )
      expect([0, 408], p).toContain(res.status)
      expect(res.bytesSent, p).toBeLessThan(100_000)
    }
  }, 30_000)

  it('an upload at a normal pace passes the same rules', async () => {
    const file = soxWav(path.join(server.dir, 'fast.wav'), { seconds: 5 })
    const res = await uploadTake(rec, sessionId, file, 'fast.wav')
    expect(res.status).toBe(201)
  })
})
