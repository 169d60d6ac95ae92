// The spectrogram route on a real server: a sox-made WAV is uploaded by a
// recordist, measured by the analysis job, then drawn. The PNG is decoded with
// pngjs; sox's own synth frequency is the reference for where the tone must show.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { PNG } from 'pngjs'
import type { Response } from 'supertest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { makeTmpDir } from '../helpers/audio-files'
import { sox } from '../helpers/reference-tools'
import { updateTake } from '../../server/takes/takes.repository'

let server: TestServer
let recordist: Client
let producer: Client
let takeId: number
const tmp = makeTmpDir('strayfield-spectrogram-api-')

// 35 s so that a 31 s excerpt lies inside the take; 16 kHz keeps the upload small.
const RATE = 16000
const SECONDS = 35
const TONE_HZ = 1000

/** Collects a binary body whatever its content type. */
function binary(res: Response, done: (err: Error | null, body: Buffer) => void) {
  const parts: Buffer[] = []
  res.on('data', (c: Buffer) => parts.push(c))
  res.on('end', () => done(null, Buffer.concat(parts)))
}

const png = (c: Client, url: string) => c.get(url).buffer(true).parse(binary as never)

async function waitUntilReady(c: Client, id: number): Promise<string> {
  let status = ''
  for (let attempt = 0; attempt < 600; attempt++) {
    status = (await c.get(`/api/takes/${id}`).expect(200)).body.take.status
    if (status === 'ready' || status === 'failed') return status
    await new Promise((r) => setTimeout(r, 100))
  }
  return status
}

function brightestRow(img: PNG, x: number): number {
  let best = -1
  let row = -1
  for (let y = 0; y < img.height; y++) {
    const o = (y * img.width + x) * 4
    const v = img.data[o] + img.data[o + 1] + img.data[o + 2]
    if (v > best) [best, row] = [v, y]
  }
  return row
}

/** Row of hz on the documented default axis: log-spaced from 20 Hz (bottom) to Nyquist (top). */
const logRow = (hz: number, height: number, nyquist: number) => height - 1 - Math.floor((height * Math.log(hz / 20)) / Math.log(nyquist / 20))

beforeAll(async () => {
  server = await startTestServer()
  recordist = await signedIn(server.url, 'recordist')
  producer = await signedIn(server.url, 'producer')
  const session = await recordist.post('/api/capture-sessions', { title: 'Spectrogram bench', date: '2026-11-30' }).expect(201)
  const wav = tmp.file('tone.wav')
  sox(['-n', '-r', String(RATE), '-b', '16', '-c', '1', wav, 'synth', String(SECONDS), 'sine', String(TONE_HZ), 'vol', '-6dB'])
  const up = await recordist.agent
    .post(`/api/capture-sessions/${session.body.session.id}/takes`)
    .set('x-csrf-token', recordist.token)
    .attach('file', wav)
  expect(up.status).toBe(201)
  takeId = up.body.take.id
  expect(await waitUntilReady(recordist, takeId)).toBe('ready')
})
afterAll(async () => {
  await server?.stop()
  tmp.cleanup()
})

describe('GET /api/takes/:id/spectrogram.png (whole take)', () => {
  it('answers a PNG of the requested size with the tone at its row, and caches it under the take', async () => {
    const res = await png(producer, `/api/takes/${takeId}/spectrogram.png?width=640&height=128`).expect(200)
    expect(res.headers['content-type']).toMatch(/^image\/png/)
    expect(res.headers['cache-control']).toMatch(/private/)
    const img = PNG.sync.read(res.body)
    expect([img.width, img.height]).toEqual([640, 128])
    expect(Math.abs(brightestRow(img, 320) - logRow(TONE_HZ, 128, RATE / 2))).toBeLessThanOrEqual(1)
    const cached = path.join(server.ctx.storage.derivedDir(takeId), 'spectrogram-640x128.png')
    expect(fs.readFileSync(cached).equals(res.body)).toBe(true)
  })

  it('serves the second request from the cached file', async () => {
    const cached = path.join(server.ctx.storage.derivedDir(takeId), 'spectrogram-700x100.png')
    const first = await png(producer, `/api/takes/${takeId}/spectrogram.png?width=700&height=100`).expect(200)
    expect(fs.existsSync(cached)).toBe(true)
    // Replace the cached image with a different one: the route must answer with it.
    const marker = new PNG({ width: 700, height: 100 })
    marker.data.fill(255)
    fs.writeFileSync(cached, PNG.sync.write(marker))
    const second = await png(producer, `/api/takes/${takeId}/spectrogram.png?width=700&height=100`).expect(200)
    expect(second.body.equals(first.body)).toBe(false)
    expect(second.body.equals(fs.readFileSync(cached))).toBe(true)
  })

  it('uses 1600×256 by default and clamps sizes to 64..4000 × 32..1024', async () => {
    const byDefault = PNG.sync.read((await png(producer, `/api/takes/${takeId}/spectrogram.png`).expect(200)).body)
    expect([byDefault.width, byDefault.height]).toEqual([1600, 256])
    const clamped = PNG.sync.read((await png(producer, `/api/takes/${takeId}/spectrogram.png?width=10&height=5000`).expect(200)).body)
    expect([clamped.width, clamped.height]).toEqual([64, 1024])
  })

  it('refuses a size that is not a number', async () => {
    const res = await producer.get(`/api/takes/${takeId}/spectrogram.png?width=wide`).expect(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
  })

  it('is 404 TAKE_NOT_FOUND for an unknown take', async () => {
    const res = await producer.get('/api/takes/999999/spectrogram.png').expect(404)
    expect(res.body.error.code).toBe('TAKE_NOT_FOUND')
  })

  it('is 409 NOT_MEASURED for a take that is not ready', async () => {
    await updateTake(server.ctx.db, takeId, { status: 'analyzing' })
    try {
      const res = await producer.get(`/api/takes/${takeId}/spectrogram.png?width=300&height=64`).expect(409)
      expect(res.body.error.code).toBe('NOT_MEASURED')
    } finally {
      await updateTake(server.ctx.db, takeId, { status: 'ready' })
    }
  })
})

describe('GET /api/takes/:id/spectrogram.png?start&end (excerpt)', () => {
  it('draws a detailed excerpt at the requested size', async () => {
    const res = await png(producer, `/api/takes/${takeId}/spectrogram.png?start=12.5&end=14.5&width=1200&height=320`).expect(200)
    expect(res.headers['content-type']).toMatch(/^image\/png/)
    const img = PNG.sync.read(res.body)
    expect([img.width, img.height]).toEqual([1200, 320])
    expect(Math.abs(brightestRow(img, 600) - logRow(TONE_HZ, 320, RATE / 2))).toBeLessThanOrEqual(1)
  })

  it('refuses an excerpt longer than 30 s with 400 EXCERPT_TOO_LONG', async () => {
    const res = await producer.get(`/api/takes/${takeId}/spectrogram.png?start=1&end=32`).expect(400)
    expect(res.body.error.code).toBe('EXCERPT_TOO_LONG')
    expect(res.body.error.message).toMatch(/30 s/)
  })

  it('refuses an excerpt past the end of the take', async () => {
    const res = await producer.get(`/api/takes/${takeId}/spectrogram.png?start=30&end=36`).expect(400)
    expect(res.body.error.code).toBe('EXCERPT_OUT_OF_RANGE')
    expect(res.body.error.message).toMatch(/0–35 s/)
  })

  it('refuses start after end, a negative start, and only one of the two', async () => {
    for (const q of ['start=5&end=4', 'start=-1&end=2', 'start=3']) {
      const res = await producer.get(`/api/takes/${takeId}/spectrogram.png?${q}`).expect(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
  })
})
