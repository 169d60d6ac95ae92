// POST /api/takes/:id/modulation on a real server. Takes are synthetic signals
// whose envelope or frequency is known in closed form (the reference is that
// formula); the files are read back by independent readers: Debian's soxi and
// ffprobe/ffmpeg for the wav control signal (rate, float format, bext
// description), Debian's python3-mido for the Standard MIDI File.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Response } from 'supertest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { ffmpegF32, ffprobe, makeTmpDir, soxi } from '../helpers/audio-files'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'
import { encodeWav } from '../../server/audio/wav-writer'
import { updateTake } from '../../server/takes/takes.repository'
import { MODULATION_LIMITS } from '../../shared/schemas/modulation'

const RATE = 48000
const SECONDS = 4
let server: TestServer
let recordist: Client
let producer: Client
let amId: number
let glideId: number
let fakeId: number
const tmp = makeTmpDir('strayfield-modulation-api-')

/** The AM take's envelope: 0.5 ± 0.4 at 3 Hz on a 1 kHz carrier. */
const envelope = (t: number) => 0.5 + 0.4 * Math.sin(2 * Math.PI * 3 * t)
/** The glide take: exponential 100 Hz → 3.2 kHz over 4 s, f(t) = 100 · 32^(t/4). */
const glideHz = (t: number) => 100 * 32 ** (t / SECONDS)

function takeBytes(sample: (t: number, i: number) => number): Buffer {
  const x = new Float32Array(RATE * SECONDS)
  for (let i = 0; i < x.length; i++) x[i] = sample(i / RATE, i)
  return encodeWav([x], { sampleRate: RATE, channels: 1, encoding: 'pcm', bitsPerSample: 24 })
}

function binary(res: Response, done: (err: Error | null, body: Buffer) => void) {
  const parts: Buffer[] = []
  res.on('data', (c: Buffer) => parts.push(c))
  res.on('end', () => done(null, Buffer.concat(parts)))
}

const modulation = (c: Client, id: number, body: object) =>
  c.agent
    .post(`/api/takes/${id}/modulation`)
    .set('x-csrf-token', c.token)
    .send(body)
    .buffer(true)
    .parse(binary as never)

function correlation(a: ArrayLike<number>, b: ArrayLike<number>): number {
  const n = a.length
  let [ma, mb] = [0, 0]
  for (let i = 0; i < n; i++) [ma, mb] = [ma + a[i], mb + b[i]]
  ;[ma, mb] = [ma / n, mb / n]
  let [ab, aa, bb] = [0, 0, 0]
  for (let i = 0; i < n; i++) {
    const [u, v] = [a[i] - ma, b[i] - mb]
    ;[ab, aa, bb] = [ab + u * v, aa + u * u, bb + v * v]
  }
  return ab / Math.sqrt(aa * bb)
}

function csvRows(text: string): number[][] {
  const lines = text.trim().split('\r\n')
  expect(lines[0]).toBe('time,value')
  return lines.slice(1).map((l) => l.split(',').map(Number))
}

const envelopeBody = { source: 'envelope', attackMs: 1, releaseMs: 5, rateHz: 1000, range: { low: 0, high: 1 } }
const toneBody = { source: 'tone', attackMs: 0, releaseMs: 0, rateHz: 100, range: { low: 0, high: 1 } }

beforeAll(async () => {
  server = await startTestServer()
  recordist = await signedIn(server.url, 'recordist')
  producer = await signedIn(server.url, 'producer')
  const session = await createSession(recordist, { title: 'Modulation bench' })
  const am = takeBytes((t) => envelope(t) * Math.sin(2 * Math.PI * 1000 * t))
  const k = Math.log(32) / SECONDS
  const glide = takeBytes((t) => 0.5 * Math.sin((2 * Math.PI * 100 * (Math.exp(k * t) - 1)) / k))
  const uploads = [
    await uploadTake(recordist, session.id, am, 'coil am.wav'),
    await uploadTake(recordist, session.id, glide, 'motor-glide.wav'),
    await uploadTake(recordist, session.id, soxWav(tmp.file('short.wav'), { rate: 8000, seconds: 1 }), 'short.wav'),
  ]
  for (const u of uploads) expect(u.status).toBe(201)
  ;[amId, glideId, fakeId] = uploads.map((u) => u.body.take.id as number)
  for (const id of [amId, glideId, fakeId]) expect((await waitForTake(recordist, id)).status).toBe('ready')
}, 180_000)

afterAll(async () => {
  await server?.stop()
  tmp.cleanup()
})

describe('envelope', () => {
  it('as csv: time,value in 0…1 of full scale, correlating ≥ 0.99 with the known envelope; a producer may make it', async () => {
    const res = await modulation(producer, amId, { ...envelopeBody, format: 'csv' }).expect(200)
    expect(res.headers['content-type']).toMatch(/^text\/csv/)
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="?coil-am_envelope\.csv"?$/)
    expect(res.headers['x-modulation-unit']).toBe('FS')
    expect(res.headers['x-modulation-points']).toBe(String(SECONDS * 1000))
    const rows = csvRows(res.body.toString('utf8'))
    expect(rows).toHaveLength(SECONDS * 1000)
    expect(rows[1500][0]).toBeCloseTo(1.5, 9)
    expect(
      correlation(
        rows.map((r) => r[1]),
        rows.map((r) => envelope(r[0])),
      ),
    ).toBeGreaterThanOrEqual(0.99)
    expect(Math.max(...rows.map((r) => r[1]))).toBeCloseTo(0.9, 1)
  })

  it('as wav: a 1 kHz mono 32-bit float control signal (soxi, ffprobe) with the scale in its bext description, correlating ≥ 0.99', async () => {
    const res = await modulation(producer, amId, { ...envelopeBody, format: 'wav', volts: { low: 0, high: 5 } }).expect(
      200,
    )
    expect(res.headers['content-type']).toBe('audio/wav')
    expect(res.headers['x-modulation-scale']).toBe('0..1 = envelope 0..1 of full scale; 0..1 = 0..5 V')
    const file = tmp.file('envelope.wav')
    fs.writeFileSync(file, res.body)
    // Debian's soxi: the rate and the float encoding.
    expect(soxi(file)).toMatchObject({
      rate: 1000,
      channels: 1,
      bits: 32,
      encoding: 'Floating Point PCM',
      samples: SECONDS * 1000,
    })
    // Debian's ffprobe: float samples; the bext description (ffmpeg's wav demuxer shows it as the comment tag).
    const probe = ffprobe(file)
    expect(probe.streams[0]).toMatchObject({ codec_name: 'pcm_f32le', sample_rate: '1000', channels: 1 })
    expect(probe.format.tags?.comment).toContain('Scale: 0..1 = envelope 0..1 of full scale; 0..1 = 0..5 V')
    const values = ffmpegF32(file)
    expect(values).toHaveLength(SECONDS * 1000)
    expect(
      correlation(
        values,
        Array.from(values, (_, k) => envelope(k / 1000)),
      ),
    ).toBeGreaterThanOrEqual(0.99)
  })

  it('maps onto the range: −1…1 turns the csv 0…1 of full scale into −1…1, point for point', async () => {
    const body = { ...envelopeBody, rateHz: 50, range: { low: -1, high: 1 } }
    const rows = csvRows(
      (await modulation(producer, amId, { ...body, format: 'csv' }).expect(200)).body.toString('utf8'),
    )
    const file = tmp.file('bipolar.wav')
    fs.writeFileSync(file, (await modulation(producer, amId, { ...body, format: 'wav' }).expect(200)).body)
    const values = ffmpegF32(file)
    expect(values).toHaveLength(SECONDS * 50)
    values.forEach((v, k) => expect(v).toBeCloseTo(-1 + 2 * rows[k][1], 5))
    expect(Math.min(...values)).toBeLessThan(-0.7) // the envelope's 0.1 trough: −0.8
  })
})

describe('tone', () => {
  it('as csv: the glide in Hz within 1 % of the true frequency at every point', async () => {
    const res = await modulation(producer, glideId, { ...toneBody, format: 'csv' }).expect(200)
    expect(res.headers['x-modulation-unit']).toBe('Hz')
    const rows = csvRows(res.body.toString('utf8'))
    expect(rows).toHaveLength(SECONDS * 100)
    for (const [t, hz] of rows) expect(Math.abs(hz / glideHz(t) - 1)).toBeLessThan(0.01)
  })

  it('of an excerpt as MIDI: parsed by python3-mido with the chosen controller and channel, one message per point at 1/rateHz, values in octaves', async () => {
    const body = {
      ...toneBody,
      startSeconds: 1,
      endSeconds: 3,
      rateHz: 50,
      range: { low: 0, high: 127 },
      format: 'midi',
      controller: 74,
      channel: 2,
    }
    const res = await modulation(producer, glideId, body).expect(200)
    expect(res.headers['content-type']).toBe('audio/midi')
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="?motor-glide_tone_1-3s\.mid"?$/)
    const file = tmp.file('tone.mid')
    fs.writeFileSync(file, res.body)
    // Debian's python3-mido: the file's type, and every control change with its time in seconds (mido applies the tempo).
    const script = `
import json, sys, mido
f = mido.MidiFile(sys.argv[1])
t, out = 0.0, []
for m in f:
    t += m.time
    if m.type == 'control_change':
        out.append([t, m.channel, m.control, m.value])
print(json.dumps({"type": f.type, "tracks": len(f.tracks), "length": f.length, "cc": out}))
`
    const parsed = JSON.parse(execFileSync('/usr/bin/python3', ['-c', script, file], { encoding: 'utf8' })) as {
      type: number
      tracks: number
      length: number
      cc: [number, number, number, number][]
    }
    expect(parsed.type).toBe(0)
    expect(parsed.tracks).toBe(1)
    expect(parsed.cc).toHaveLength(100) // 2 s at 50 Hz
    expect(parsed.length).toBeCloseTo(2, 3)
    parsed.cc.forEach(([t, channel, control, value], k) => {
      expect(t).toBeCloseTo(k / 50, 4) // 1 tick = 1 ms: 20 ms apart exactly
      expect(channel).toBe(1) // mido counts channels from 0
      expect(control).toBe(74)
      // log2(f / 20 Hz) / 10 octaves onto 0…127, f the glide's frequency at the point's time in the take.
      const expected = (127 * Math.log2(glideHz(1 + k / 50) / 20)) / 10
      expect(Math.abs(value - expected)).toBeLessThanOrEqual(1)
    })
  })

  it('as wav with a chosen reference and octave span: log2(f / referenceHz) / octaves', async () => {
    const res = await modulation(producer, glideId, {
      ...toneBody,
      format: 'wav',
      referenceHz: 100,
      octaves: 5,
    }).expect(200)
    expect(res.headers['x-modulation-scale']).toBe('0..1 = tone 100..3200 Hz, log2(f/100 Hz)/5')
    const file = tmp.file('tone.wav')
    fs.writeFileSync(file, res.body)
    const values = ffmpegF32(file)
    // 100 Hz · 32^(t/4) is exactly t/4 of the 5 octaves above 100 Hz.
    for (let k = 0; k < values.length; k += 10)
      expect(Math.abs(values[k] - k / 100 / SECONDS)).toBeLessThan(Math.log2(1.01) / 5)
  })
})

describe('centroid', () => {
  it('of a single tone is the tone', async () => {
    const res = await modulation(producer, glideId, {
      ...toneBody,
      source: 'centroid',
      format: 'csv',
      startSeconds: 2,
      endSeconds: 2.5,
    }).expect(200)
    const rows = csvRows(res.body.toString('utf8'))
    expect(rows).toHaveLength(50)
    for (const [t, hz] of rows) expect(Math.abs(hz / glideHz(2 + t) - 1)).toBeLessThan(0.01)
  })
})

describe('refusals', () => {
  const code = (res: Response) =>
    (JSON.parse(res.body.toString('utf8')) as { error: { code: string; message: string } }).error

  it('answers 404 for an unknown take and 400 for an empty or inconsistent body', async () => {
    expect(code(await modulation(producer, 999999, { ...envelopeBody, format: 'csv' }).expect(404)).code).toBe(
      'TAKE_NOT_FOUND',
    )
    expect(code(await modulation(producer, amId, {}).expect(400)).code).toBe('VALIDATION_FAILED')
    const bad = [
      { ...envelopeBody, format: 'csv', range: { low: 0.5, high: 0.5 } },
      { ...envelopeBody, format: 'wav', range: { low: 0, high: 5 } },
      { ...envelopeBody, format: 'midi', range: { low: 0, high: 127 }, rateHz: 2000 },
      { ...envelopeBody, format: 'midi', range: { low: 0, high: 127 }, controller: 121 },
      { ...envelopeBody, format: 'csv', startSeconds: 2, endSeconds: 1 },
      { ...envelopeBody, format: 'csv', source: 'loudness' },
      { ...envelopeBody, format: 'csv', rateHz: 0 },
    ]
    for (const b of bad) expect(code(await modulation(producer, amId, b).expect(400)).code).toBe('VALIDATION_FAILED')
    const past = code(
      await modulation(producer, amId, { ...envelopeBody, format: 'csv', startSeconds: 3, endSeconds: 5 }).expect(400),
    )
    expect(past.code).toBe('EXCERPT_OUT_OF_RANGE')
  })

  it('caps the excerpt length and the number of points with clear 400s, and waits for the take to be measured (409)', async () => {
    await updateTake(server.ctx.db, fakeId, { duration_seconds: 700 })
    const long = code(
      await modulation(producer, fakeId, { ...envelopeBody, format: 'csv', endSeconds: 650 }).expect(400),
    )
    expect(long.code).toBe('EXCERPT_TOO_LONG')
    expect(long.message).toContain(`${MODULATION_LIMITS.maxSeconds} s`)
    const dense = code(
      await modulation(producer, fakeId, { ...envelopeBody, format: 'wav', rateHz: 48000, endSeconds: 50 }).expect(400),
    )
    expect(dense.code).toBe('TOO_MANY_POINTS')
    expect(dense.message).toContain('Lower rateHz or shorten the excerpt')
    await updateTake(server.ctx.db, fakeId, { status: 'analyzing' })
    expect(code(await modulation(producer, fakeId, { ...envelopeBody, format: 'csv' }).expect(409)).code).toBe(
      'NOT_MEASURED',
    )
  })
})
