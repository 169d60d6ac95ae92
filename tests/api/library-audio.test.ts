// Byte ranges of GET /api/takes/:id/audio, checked byte for byte against the
// file on disk, for a take uploaded through the API like any other.
// Source: RFC 9110 (HTTP Semantics) §14 "Range Requests" and §15.3.7 / §15.5.17
// (206 Partial Content, 416 Range Not Satisfiable); the successor of RFC 7233.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Response } from 'supertest'
import { encodeWav } from '../../server/audio/wav-writer'
import { mainsHum } from '../../server/audio/synth'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'

let server: TestServer
let listener: Client
let takeId: number
let onDisk: Buffer
let size: number

const binary = (res: Response & NodeJS.ReadableStream, cb: (err: Error | null, body: Buffer) => void) => {
  const chunks: Buffer[] = []
  res.on('data', (c: Buffer) => chunks.push(c))
  res.on('end', () => cb(null, Buffer.concat(chunks)))
}

function audio(range?: string) {
  let req = listener.get(`/api/takes/${takeId}/audio`)
  if (range !== undefined) req = req.set('Range', range)
  return req.buffer(true).parse(binary as never)
}

beforeAll(async () => {
  server = await startTestServer()
  const recordist = await signedIn(server.url, 'recordist')
  const session = await recordist
    .post('/api/capture-sessions', { title: 'Range check bench', date: '2026-11-30' })
    .expect(201)
  // 1.2345 s of 50 Hz hum, 16-bit mono: an odd-sized file, so off-by-one errors show.
  const wav = encodeWav(mainsHum({ hz: 50, seconds: 1.2345, sampleRate: 48000, levelDbfs: -20, seed: 3 }), {
    sampleRate: 48000,
    channels: 1,
    encoding: 'pcm',
    bitsPerSample: 16,
  })
  const file = path.join(server.dir, 'range-check.wav')
  fs.writeFileSync(file, wav)
  const up = await recordist.agent
    .post(`/api/capture-sessions/${session.body.session.id}/takes`)
    .set('x-csrf-token', recordist.token)
    .attach('file', file)
  expect(up.status, JSON.stringify(up.body)).toBe(201)
  takeId = up.body.take.id
  const row = await server.ctx.db
    .selectFrom('takes')
    .select(['audio_path', 'size_bytes'])
    .where('id', '=', takeId)
    .executeTakeFirstOrThrow()
  onDisk = fs.readFileSync(server.ctx.storage.abs(row.audio_path))
  size = onDisk.length
  expect(row.size_bytes).toBe(size)
  expect(onDisk.equals(wav)).toBe(true)
  listener = await signedIn(server.url, 'collaborator')
})
afterAll(async () => {
  await server.stop()
})

describe('GET /api/takes/:id/audio with Range (RFC 9110 §14)', () => {
  it('sends the whole file with 200 and advertises byte ranges (§14.3 Accept-Ranges)', async () => {
    const res = await audio()
    expect(res.status).toBe(200)
    expect(res.headers['accept-ranges']).toBe('bytes')
    expect(res.headers['content-type']).toMatch(/^audio\/wav/)
    expect(Number(res.headers['content-length'])).toBe(size)
    expect((res.body as Buffer).equals(onDisk)).toBe(true)
  })

  it('sends the first 100 bytes for bytes=0-99 (§14.1.2 first-pos to last-pos, inclusive)', async () => {
    const res = await audio('bytes=0-99')
    expect(res.status).toBe(206)
    // §14.4 Content-Range: bytes first-last/complete-length
    expect(res.headers['content-range']).toBe(`bytes 0-99/${size}`)
    expect(Number(res.headers['content-length'])).toBe(100)
    expect((res.body as Buffer).equals(onDisk.subarray(0, 100))).toBe(true)
    expect((res.body as Buffer).subarray(0, 4).toString('latin1')).toBe('RIFF')
  })

  it('sends a range from the middle', async () => {
    const res = await audio('bytes=40000-40999')
    expect(res.status).toBe(206)
    expect(res.headers['content-range']).toBe(`bytes 40000-40999/${size}`)
    expect((res.body as Buffer).equals(onDisk.subarray(40000, 41000))).toBe(true)
  })

  it('sends a single byte for bytes=N-N', async () => {
    const res = await audio('bytes=12345-12345')
    expect(res.status).toBe(206)
    expect(res.headers['content-range']).toBe(`bytes 12345-12345/${size}`)
    expect((res.body as Buffer).equals(onDisk.subarray(12345, 12346))).toBe(true)
  })

  it('sends the last 500 bytes for the suffix range bytes=-500 (§14.1.2 suffix-range)', async () => {
    const res = await audio('bytes=-500')
    expect(res.status).toBe(206)
    expect(res.headers['content-range']).toBe(`bytes ${size - 500}-${size - 1}/${size}`)
    expect((res.body as Buffer).equals(onDisk.subarray(size - 500))).toBe(true)
  })

  it('sends from an offset to the end for the open range bytes=1000- (§14.1.2 no last-pos)', async () => {
    const res = await audio('bytes=1000-')
    expect(res.status).toBe(206)
    expect(res.headers['content-range']).toBe(`bytes 1000-${size - 1}/${size}`)
    expect(Number(res.headers['content-length'])).toBe(size - 1000)
    expect((res.body as Buffer).equals(onDisk.subarray(1000))).toBe(true)
  })

  it('clips a last-pos beyond the end to the last byte (§14.1.2)', async () => {
    const res = await audio(`bytes=${size - 10}-${size + 5000}`)
    expect(res.status).toBe(206)
    expect(res.headers['content-range']).toBe(`bytes ${size - 10}-${size - 1}/${size}`)
    expect((res.body as Buffer).equals(onDisk.subarray(size - 10))).toBe(true)
  })

  it('answers 416 with Content-Range: bytes */size when no range can be satisfied (§15.5.17, §14.4)', async () => {
    for (const range of [`bytes=${size}-`, `bytes=${size + 100}-${size + 200}`]) {
      const res = await audio(range)
      expect(res.status, range).toBe(416)
      expect(res.headers['content-range']).toBe(`bytes */${size}`)
      const body = JSON.parse((res.body as Buffer).toString('utf8'))
      expect(body.error.code).toBe('RANGE_NOT_SATISFIABLE')
      expect(body.error.details.sizeBytes).toBe(size)
    }
  })

  it('ignores a Range in another unit and sends the whole file (§14.2: a server MAY ignore Range)', async () => {
    const res = await audio('items=0-5')
    expect(res.status).toBe(200)
    expect((res.body as Buffer).equals(onDisk)).toBe(true)
  })

  it('answers 404 TAKE_NOT_FOUND for a take that does not exist', async () => {
    const res = await listener.get('/api/takes/999999/audio').set('Range', 'bytes=0-99')
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('TAKE_NOT_FOUND')
  })
})
