// Resumable uploads through the tus protocol (tus 1.0.0: creation, HEAD offset, PATCH), with
// tus-js-client as the browser uses it. Run by npm test against the local folder and by
// npm run test:scaled against the S3 gateway (STORAGE_URL=s3://…, @tus/s3-store).
import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, soxWav } from '../helpers/uploads'
import { cookieHeader, memoryUrlStorage, tusUpload } from '../helpers/tus'

let server: TestServer
let rec: Client
let sessionId: number
let wav: Buffer

const sha = (b: Buffer) => crypto.createHash('sha256').update(b).digest('hex')
const takes = () => server.ctx.db.selectFrom('takes').select(['id', 'sha256', 'audio_path', 'size_bytes']).execute()
const tusLeft = () => {
  const dir = path.join(server.ctx.storage.root, 'tus')
  return fs.existsSync(dir) ? fs.readdirSync(dir) : []
}

beforeAll(async () => {
  server = await startTestServer()
  rec = await signedIn(server.url, 'recordist')
  sessionId = (await createSession(rec)).id
  // 20 s of 48 kHz 24-bit stereo noise: about 5.8 MB, six 1 MiB PATCH requests.
  const file = soxWav(path.join(server.dir, 'files', 'long.wav'), {
    rate: 48000,
    bits: 24,
    channels: 2,
    seconds: 20,
    synth: ['whitenoise'],
  })
  wav = fs.readFileSync(file)
})
afterAll(async () => {
  await server.stop()
})

describe('resumable uploads (tus)', () => {
  it('resumes an upload cut off mid-way from the same fingerprint: same SHA-256, one take', async () => {
    const urlStorage = memoryUrlStorage()
    const metadata = { captureSessionId: String(sessionId), filename: 'long coil run.wav' }
    const cut = await tusUpload(rec, server.url, wav, { urlStorage, metadata, abortAfter: 2.5 * 2 ** 20 })
    expect(cut.status).toBeNull()
    expect(await takes()).toEqual([])

    // The server kept what arrived: HEAD answers the offset (tus 1.0.0 §HEAD).
    const head = await rec.agent.head(new URL(cut.url!, server.url).pathname).set('Tus-Resumable', '1.0.0')
    expect(head.status).toBe(200)
    const kept = Number(head.headers['upload-offset'])
    expect(kept).toBeGreaterThanOrEqual(2 * 2 ** 20)
    expect(kept).toBeLessThan(wav.length)

    const resumed = await tusUpload(rec, server.url, wav, { urlStorage, metadata })
    expect(resumed.url).toBe(cut.url)
    expect(resumed.offsets[0]).toBe(kept) // went on from the kept byte, not from 0
    expect(resumed.status).toBe(201)
    const take = JSON.parse(resumed.body).take
    expect(take).toMatchObject({ filename: 'long coil run.wav', status: 'queued' })

    const rows = await takes()
    expect(rows).toHaveLength(1)
    expect(rows[0]).toMatchObject({ id: take.id, sha256: sha(wav), size_bytes: wav.length })
    // Under npm run test:scaled the take's audio is in the S3 bucket, not only in the working copy.
    expect(server.ctx.storage.remote).toBe(Boolean(process.env.STORAGE_URL))
    expect(await server.ctx.storage.blobs.size(rows[0].audio_path)).toBe(wav.length)
    const audio = await rec.get(`/api/takes/${take.id}/audio`).buffer(true).expect(200)
    expect(sha(audio.body as Buffer)).toBe(sha(wav))
    // The finished upload is gone from the tus store.
    await rec.agent.head(new URL(cut.url!, server.url).pathname).set('Tus-Resumable', '1.0.0').expect(404)
    expect(tusLeft().filter((f) => !f.endsWith('.json'))).toEqual([])
  })

  it('refuses the same bytes again with 409 DUPLICATE and keeps one take', async () => {
    const run = await tusUpload(rec, server.url, wav, {
      urlStorage: memoryUrlStorage(),
      metadata: { captureSessionId: String(sessionId), filename: 'again.wav' },
    })
    expect(run.status).toBe(409)
    expect(JSON.parse(run.body).error.code).toBe('DUPLICATE')
    expect(await takes()).toHaveLength(1)
  })

  it('refuses what is not a WAV with 415 after the last byte, keeping nothing', async () => {
    const run = await tusUpload(rec, server.url, crypto.randomBytes(300_000), {
      urlStorage: memoryUrlStorage(),
      metadata: { captureSessionId: String(sessionId), filename: 'noise.bin' },
    })
    expect(run.status).toBe(415)
    expect(JSON.parse(run.body).error.code).toBe('UNSUPPORTED_AUDIO')
    expect(await takes()).toHaveLength(1)
    expect(tusLeft()).toEqual([])
    expect(fs.readdirSync(path.join(server.ctx.storage.root, 'incoming'))).toEqual([])
  })

  it('refuses at creation: unknown session 404, missing metadata 400, a producer 403, no sign-in 401', async () => {
    const bytes = Buffer.from('RIFF')
    const unknown = await tusUpload(rec, server.url, bytes, {
      urlStorage: memoryUrlStorage(),
      metadata: { captureSessionId: '999999', filename: 'x.wav' },
    })
    expect([unknown.status, JSON.parse(unknown.body).error.code]).toEqual([404, 'SESSION_NOT_FOUND'])
    const bare = await tusUpload(rec, server.url, bytes, { urlStorage: memoryUrlStorage(), metadata: {} })
    expect([bare.status, JSON.parse(bare.body).error.code]).toEqual([400, 'BAD_UPLOAD'])
    const producer = await signedIn(server.url, 'producer')
    const refused = await tusUpload(producer, server.url, bytes, {
      urlStorage: memoryUrlStorage(),
      metadata: { captureSessionId: String(sessionId), filename: 'x.wav' },
    })
    expect(refused.status).toBe(403)
    const anon = await fetch(`${server.url}/api/files/tus-anything`, {
      method: 'HEAD',
      headers: { 'Tus-Resumable': '1.0.0' },
    })
    expect(anon.status).toBe(401)
  })

  it("keeps one member's upload from another: HEAD and PATCH answer 404, and POST needs the CSRF token", async () => {
    const cut = await tusUpload(rec, server.url, wav, {
      urlStorage: memoryUrlStorage(),
      metadata: { captureSessionId: String(sessionId), filename: 'mine.wav' },
      abortAfter: 2 ** 20,
    })
    const other = await signedIn(server.url, 'admin') // may upload too, but this upload is not theirs
    const p = new URL(cut.url!, server.url).pathname
    await other.agent.head(p).set('Tus-Resumable', '1.0.0').expect(404)
    const patch = await fetch(`${server.url}${p}`, {
      method: 'PATCH',
      headers: {
        'Tus-Resumable': '1.0.0',
        'Upload-Offset': '0',
        'Content-Type': 'application/offset+octet-stream',
        cookie: cookieHeader(other, server.url),
        'x-csrf-token': other.token,
      },
      body: new Uint8Array(16),
    })
    expect(patch.status).toBe(404)
    const noToken = await fetch(`${server.url}/api/files`, {
      method: 'POST',
      headers: { 'Tus-Resumable': '1.0.0', 'Upload-Length': '4', cookie: cookieHeader(rec, server.url) },
    })
    expect(noToken.status).toBe(403)
  })
})
