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

const png = (c: Client, url: string) =>
  c
    .get(url)
    .buffer(true)
    .parse(binary as never)

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
const logRow = (hz: number, height: number, nyquist: number) =>
  height - 1 - Math.floor((height * Math.log(hz / 20)) / Math.log(nyquist / 20))

beforeAll(async () => {
  server = await startTestServer()
  recordist = await signedIn(server.url, 'recordist')
  producer = await signedIn(server.url, 'producer')
  const session = await recordist
    .post('/api/capture-sessions', { title: 'Spectrogram bench', date: '2026-11-30' })
    .expect(201)
  const wav = tmp.file('tone.wav')
  sox([
    '-n',
    '-r',
    String(RATE),
    '-b',
    '16',
    '-c',
    '1',
    wav,
    'synth',
    String(SECONDS),
    'sine',
    String(TONE_HZ),
    'vol',
    '-6dB',
  ])
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
  it('answers a PNG at the nearest menu size with the tone at its row, and caches it under the take', async () => {
    const res = await png(producer, `/api/takes/${takeId}/spectrogram.png?width=600&height=128`).expect(200)
    expect(res.headers['content-type']).toMatch(/^image\/png/)
    expect(res.headers['cache-control']).toMatch(/private/)
    const img = PNG.sync.read(res.body)
    expect([img.width, img.height]).toEqual([512, 128])
    expect(Math.abs(brightestRow(img, 256) - logRow(TONE_HZ, 128, RATE / 2))).toBeLessThanOrEqual(1)
    const cached = path.join(server.ctx.storage.derivedDir(takeId), 'spectrogram-512x128.png')
    expect(fs.readFileSync(cached).equals(res.body)).toBe(true)
    // The whole take on the default axis: 0 s to the take's end, 20 Hz to Nyquist, −110 dBFS floor.
    expect(res.headers['x-spectrogram-start']).toBe('0')
    expect(Number(res.headers['x-spectrogram-end'])).toBeCloseTo(SECONDS, 3)
    expect(res.headers['x-spectrogram-min-hz']).toBe('20')
    expect(res.headers['x-spectrogram-max-hz']).toBe(String(RATE / 2))
    expect(res.headers['x-spectrogram-floor-db']).toBe('-110')
  })

  it('serves the second request from the cached file', async () => {
    const cached = path.join(server.ctx.storage.derivedDir(takeId), 'spectrogram-1024x64.png')
    const first = await png(producer, `/api/takes/${takeId}/spectrogram.png?width=1000&height=70`).expect(200)
    expect(fs.existsSync(cached)).toBe(true)
    // Replace the cached image with a different one: the route must answer with it.
    const marker = new PNG({ width: 1024, height: 64 })
    marker.data.fill(255)
    fs.writeFileSync(cached, PNG.sync.write(marker))
    const second = await png(producer, `/api/takes/${takeId}/spectrogram.png?width=1000&height=70`).expect(200)
    expect(second.body.equals(first.body)).toBe(false)
    expect(second.body.equals(fs.readFileSync(cached))).toBe(true)
  })

  it('uses 1600×256 by default and snaps any size onto the menu (widths 256–3200, heights 64–512) instead of refusing it', async () => {
    const byDefault = PNG.sync.read((await png(producer, `/api/takes/${takeId}/spectrogram.png`).expect(200)).body)
    expect([byDefault.width, byDefault.height]).toEqual([1600, 256])
    const tiny = await png(producer, `/api/takes/${takeId}/spectrogram.png?width=10&height=5000`).expect(200)
    expect([PNG.sync.read(tiny.body).width, PNG.sync.read(tiny.body).height]).toEqual([256, 512])
    expect([tiny.headers['x-spectrogram-width'], tiny.headers['x-spectrogram-height']]).toEqual(['256', '512'])
    const near = PNG.sync.read(
      (await png(producer, `/api/takes/${takeId}/spectrogram.png?width=1590.7&height=250`).expect(200)).body,
    )
    expect([near.width, near.height]).toEqual([1600, 256])
  })

  it('snaps the floor to whole dB and the band to whole Hz, and says so in its headers', async () => {
    const res = await png(
      producer,
      `/api/takes/${takeId}/spectrogram.png?width=256&height=64&floorDb=-90.6&minHz=30.4&maxHz=7000.7&scale=linear`,
    ).expect(200)
    expect(res.headers['x-spectrogram-floor-db']).toBe('-91')
    expect(res.headers['x-spectrogram-min-hz']).toBe('30')
    expect(res.headers['x-spectrogram-max-hz']).toBe('7001')
    expect(res.headers['x-spectrogram-scale']).toBe('linear')
    // A nearby request lands on the same variant: the same cached file, byte for byte.
    const again = await png(
      producer,
      `/api/takes/${takeId}/spectrogram.png?width=260&height=60&floorDb=-91.4&minHz=29.6&maxHz=7001.2&scale=linear`,
    ).expect(200)
    expect(again.body.equals(res.body)).toBe(true)
    expect(
      fs.existsSync(path.join(server.ctx.storage.derivedDir(takeId), 'spectrogram-256x64-linear-30-7001-f-91.png')),
    ).toBe(true)
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
  it('draws a detailed excerpt at the nearest menu size', async () => {
    const res = await png(
      producer,
      `/api/takes/${takeId}/spectrogram.png?start=12.5&end=14.5&width=1200&height=320`,
    ).expect(200)
    expect(res.headers['content-type']).toMatch(/^image\/png/)
    const img = PNG.sync.read(res.body)
    expect([img.width, img.height]).toEqual([1024, 256])
    expect(Math.abs(brightestRow(img, 512) - logRow(TONE_HZ, 256, RATE / 2))).toBeLessThanOrEqual(1)
  })

  it('snaps start down and end up to 10 ms, answers the rendered span in headers, and caches the excerpt', async () => {
    const url = `/api/takes/${takeId}/spectrogram.png?start=12.345&end=14.001&width=512&height=64`
    const res = await png(producer, url).expect(200)
    expect(res.headers['x-spectrogram-start']).toBe('12.34')
    expect(res.headers['x-spectrogram-end']).toBe('14.01')
    const cached = path.join(
      server.ctx.storage.derivedDir(takeId),
      'spectrogram-512x64-log-20-8000-f-110-t1234-1401.png',
    )
    expect(fs.readFileSync(cached).equals(res.body)).toBe(true)
    const same = await png(
      producer,
      `/api/takes/${takeId}/spectrogram.png?start=12.341&end=14.009&width=512&height=64`,
    ).expect(200)
    expect(same.body.equals(res.body)).toBe(true)
  })

  it('refuses an excerpt longer than 30 s with 400 EXCERPT_TOO_LONG', async () => {
    const res = await producer.get(`/api/takes/${takeId}/spectrogram.png?start=1&end=32`).expect(400)
    expect(res.body.error.code).toBe('EXCERPT_TOO_LONG')
    expect(res.body.error.message).toMatch(/30 s/)
  })

  it('takes exactly 30 s written as decimals (30.37 − 0.37 is not exactly 30 in binary)', async () => {
    await png(producer, `/api/takes/${takeId}/spectrogram.png?start=0.37&end=30.37&width=512&height=64`).expect(200)
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
