// Splitting a sweep over HTTP: proposals on the heavy-work pool, then the split
// itself. Each new take must be a sample-exact copy of its range (compared
// byte for byte with the source's data chunk), keep the source's format and
// metadata chunks with bext TimeReference moved to its start (EBU Tech 3285:
// samples since midnight), and be read back with the right length by Debian's
// soxi and ffprobe. A refused split leaves no take and no file.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { sql } from 'kysely'
import { SplitResponse, SplitSuggestionsResponse } from '@shared/schemas/instrument'
import { HistoryResponse } from '@shared/schemas/library'
import { encodeWav } from '../../server/audio/wav-writer'
import { probeWav } from '../../server/audio/wav-reader'
import { parseBext } from '../../server/audio/wav-chunks'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { ffmpegF32, ffprobe, makeTmpDir, soxi, type TmpDir } from '../helpers/audio-files'
import { buildSweep } from '../audio/split-signals'

let server: TestServer
let recordist: Client
let designer: Client
let tmp: TmpDir
let sessionId: number
let sweepTake: number
let sweepWav: Buffer
let twinTake: number
const RATE = 48000
const TIME_REF = 48000 * 3600 * 9 // 09:00:00 on the recorder's clock
const sweep = buildSweep(21, 5, [true, false, true, false], RATE)

const binary = (res: NodeJS.ReadableStream, cb: (err: Error | null, body: Buffer) => void) => {
  const chunks: Buffer[] = []
  res.on('data', (c: Buffer) => chunks.push(c))
  res.on('end', () => cb(null, Buffer.concat(chunks)))
}
const audioOf = async (id: number): Promise<Buffer> =>
  (
    await designer.agent
      .get(`/api/takes/${id}/audio`)
      .buffer(true)
      .parse(binary as never)
  ).body as Buffer

const takesIn = async (session: number) =>
  ((await designer.get(`/api/takes?sessionId=${session}&pageSize=200`)).body.items as { id: number }[]).map((t) => t.id)

function filesUnder(dir: string): string[] {
  return fs.existsSync(dir)
    ? fs
        .readdirSync(dir, { recursive: true, withFileTypes: true })
        .filter((d) => d.isFile())
        .map((d) => d.name)
    : []
}
const storageFiles = () => [
  ...filesUnder(path.join(server.dir, 'storage', 'audio')),
  ...filesUnder(path.join(server.dir, 'storage', 'incoming')),
]

beforeAll(async () => {
  server = await startTestServer()
  recordist = await signedIn(server.url, 'recordist')
  designer = await signedIn(server.url, 'designer')
  tmp = makeTmpDir('strayfield-split-')
  sessionId = (await createSession(recordist, { title: 'Bench sweep, workshop shelf' })).id
  const right = sweep.samples.map((v) => -0.5 * v)
  sweepWav = encodeWav([sweep.samples, right], {
    sampleRate: RATE,
    channels: 2,
    encoding: 'pcm',
    bitsPerSample: 24,
    bext: { description: 'Shelf sweep, coil at 2 cm', originator: 'Field kit', timeReference: TIME_REF },
    info: { INAM: 'Shelf sweep' },
    cues: [{ id: 1, frame: sweep.pieces[2][0] + 100, label: 'third device' }],
  })
  const up = await uploadTake(recordist, sessionId, sweepWav, 'shelf-sweep.wav')
  expect(up.status, JSON.stringify(up.body)).toBe(201)
  sweepTake = (await waitForTake(recordist, up.body.take.id)).id
  // A take whose two halves are the same bytes (no bext to tell them apart).
  const half = buildSweep(22, 1, [], RATE).samples.subarray(0, RATE * 2)
  const twice = new Float32Array(half.length * 2)
  twice.set(half, 0)
  twice.set(half, half.length)
  const up2 = await uploadTake(
    recordist,
    sessionId,
    encodeWav([twice], { sampleRate: RATE, channels: 1, encoding: 'pcm', bitsPerSample: 16 }),
    'twice.wav',
  )
  twinTake = (await waitForTake(recordist, up2.body.take.id)).id
}, 180_000)
afterAll(async () => {
  tmp?.cleanup()
  await server?.stop()
})

describe('POST /api/takes/:id/split-suggestions', () => {
  it('finds the four joins of a five-device sweep (each within 100 ms), with reasons', async () => {
    const res = await recordist.post(`/api/takes/${sweepTake}/split-suggestions`, {})
    expect(res.status, JSON.stringify(res.body)).toBe(200)
    const { segments } = SplitSuggestionsResponse.parse(res.body)
    expect(segments).toHaveLength(5)
    for (const [k, [a, b]] of sweep.pieces.entries()) {
      expect(Math.abs(segments[k].startSeconds - a / RATE), `start of ${k + 1}`).toBeLessThanOrEqual(0.1)
      expect(Math.abs(segments[k].endSeconds - b / RATE), `end of ${k + 1}`).toBeLessThanOrEqual(0.1)
    }
    expect(segments.slice(1).map((s) => s.reason)).toEqual(['pause', 'change', 'pause', 'change'])
  })

  it('refuses a bad body and unknown takes', async () => {
    expect((await recordist.post(`/api/takes/${sweepTake}/split-suggestions`, { sensitivity: 2 })).status).toBe(400)
    expect(
      (await recordist.post(`/api/takes/${sweepTake}/split-suggestions`, { minSegmentSeconds: 0.01 })).status,
    ).toBe(400)
    expect((await recordist.post(`/api/takes/999999/split-suggestions`, {})).status).toBe(404)
  })
})

describe('POST /api/takes/:id/split', () => {
  it('makes each segment a take of its own: a sample-exact copy with its metadata, read back by soxi and ffprobe', async () => {
    const before = await takesIn(sessionId)
    const src = tmp.file('source.wav')
    fs.writeFileSync(src, sweepWav)
    const srcInfo = await probeWav(src)
    const ranges = sweep.pieces.slice(1, 4).map(([a, b]) => ({ startSeconds: a / RATE, endSeconds: b / RATE }))
    const res = await designer.post(`/api/takes/${sweepTake}/split`, { segments: ranges })
    expect(res.status, JSON.stringify(res.body)).toBe(201)
    const { takes } = SplitResponse.parse(res.body)
    expect(takes).toHaveLength(3)
    for (const [k, t] of takes.entries()) {
      const [a, b] = sweep.pieces[k + 1]
      expect(t.sessionId).toBe(sessionId)
      expect(t.filename).toBe(`shelf-sweep part ${k + 1} of 3.wav`)
      const file = tmp.file(`part-${k}.wav`)
      fs.writeFileSync(file, await audioOf(t.id))
      const info = await probeWav(file)
      expect(info.format).toMatchObject({ sampleRate: RATE, channels: 2, bitsPerSample: 24, frames: b - a })
      // The data bytes are those of the source's range, byte for byte.
      const got = fs.readFileSync(file).subarray(info.dataOffset, info.dataOffset + info.dataBytes)
      const want = sweepWav.subarray(srcInfo.dataOffset + a * 6, srcInfo.dataOffset + b * 6)
      expect(got.equals(want)).toBe(true)
      // bext kept, its TimeReference now the segment's first sample (EBU Tech 3285).
      const bextChunk = info.chunks.find((c) => c.id === 'bext')!
      const bext = parseBext(fs.readFileSync(file).subarray(bextChunk.offset, bextChunk.offset + bextChunk.size))
      expect(bext.description).toBe('Shelf sweep, coil at 2 cm')
      expect(bext.timeReference).toBe(TIME_REF + a)
      expect(info.chunks.some((c) => c.id === 'LIST')).toBe(true)
      // Debian's soxi and ffprobe read the new file's length.
      expect(soxi(file)).toMatchObject({ rate: RATE, channels: 2, bits: 24, samples: b - a })
      const probe = ffprobe(file)
      expect(Number(probe.format.duration)).toBeCloseTo((b - a) / RATE, 3)
      expect(probe.streams[0].codec_name).toBe('pcm_s24le')
    }
    // The cue inside the second segment (the third device) moved with it.
    const second = await probeWav(tmp.file('part-1.wav'))
    const cue = second.chunks.find((c) => c.id === 'cue ')!
    const cueBytes = fs.readFileSync(tmp.file('part-1.wav')).subarray(cue.offset, cue.offset + cue.size)
    expect(cueBytes.readUInt32LE(0)).toBe(1)
    expect(cueBytes.readUInt32LE(4 + 20)).toBe(100)

    // Measured like any upload, listed in the capture session beside the sweep, which stays.
    for (const t of takes) expect((await waitForTake(designer, t.id)).status).toBe('ready')
    const after = await takesIn(sessionId)
    expect(after.sort()).toEqual([...before, ...takes.map((t) => t.id)].sort())
    const history = async (id: number) =>
      HistoryResponse.parse((await designer.get(`/api/takes/${id}/history`)).body).events.map(
        (e) => e.kind + ' ' + e.summary,
      )
    expect((await history(sweepTake)).find((e) => e.startsWith('split'))).toContain(takes.map((t) => t.id).join(', '))
    expect((await history(takes[0].id)).find((e) => e.startsWith('split'))).toContain(`Split from take ${sweepTake}`)
  })

  it('refuses segments outside the take, overlapping or too short, with nothing left behind', async () => {
    const before = [await takesIn(sessionId), storageFiles()]
    const d = sweep.samples.length / RATE
    const bad = [
      [{ startSeconds: 1, endSeconds: d + 1 }, 'OUT_OF_RANGE'],
      [{ startSeconds: 3, endSeconds: 2 }, 'OUT_OF_RANGE'],
      [{ startSeconds: 1, endSeconds: 1.2 }, 'SEGMENT_TOO_SHORT'],
    ] as const
    for (const [seg, code] of bad) {
      const res = await designer.post(`/api/takes/${sweepTake}/split`, { segments: [seg] })
      expect(res.status).toBe(400)
      expect(res.body.error.code).toBe(code)
    }
    const overlap = await designer.post(`/api/takes/${sweepTake}/split`, {
      segments: [
        { startSeconds: 0, endSeconds: 4 },
        { startSeconds: 3.5, endSeconds: 6 },
      ],
    })
    expect(overlap.status).toBe(400)
    expect(overlap.body.error).toMatchObject({ code: 'SEGMENTS_OVERLAP', details: { segments: [0, 1] } })
    expect((await designer.post(`/api/takes/${sweepTake}/split`, {})).status).toBe(400)
    expect((await designer.post(`/api/takes/${sweepTake}/split`, { segments: [] })).status).toBe(400)
    expect(
      (await designer.post(`/api/takes/999999/split`, { segments: [{ startSeconds: 0, endSeconds: 1 }] })).status,
    ).toBe(404)
    expect([await takesIn(sessionId), storageFiles()]).toEqual(before)
  })

  it('says so when a segment would duplicate a take, and splits nothing (all or nothing)', async () => {
    const before = [await takesIn(sessionId), storageFiles()]
    // The same range as before, beside a new one: the new one is not made either.
    const [a, b] = sweep.pieces[1]
    const again = await designer.post(`/api/takes/${sweepTake}/split`, {
      segments: [
        { startSeconds: 0, endSeconds: 2 },
        { startSeconds: a / RATE, endSeconds: b / RATE },
      ],
    })
    expect(again.status).toBe(409)
    expect(again.body.error.code).toBe('DUPLICATE_SEGMENT')
    expect(again.body.error.message).toMatch(/same content as take \d+.*nothing was split/)
    expect(again.body.error.details.segment).toBe(1)
    // Two segments of identical bytes in one request.
    const twins = await designer.post(`/api/takes/${twinTake}/split`, {
      segments: [
        { startSeconds: 0, endSeconds: 2 },
        { startSeconds: 2, endSeconds: 4 },
      ],
    })
    expect(twins.status).toBe(409)
    expect(twins.body.error).toMatchObject({ code: 'DUPLICATE_SEGMENT', details: { segment: 1, sameAsSegment: 0 } })
    expect([await takesIn(sessionId), storageFiles()]).toEqual(before)
  })

  it('leaves no take, row or file when the split fails inside its transaction', async () => {
    const jobCount = async () => (await server.ctx.db.selectFrom('jobs').select('id').execute()).length
    const before = [await takesIn(sessionId), storageFiles(), await jobCount()]
    // A failure injected after every new take row is written: the whole unit must roll back.
    await sql`CREATE TRIGGER fail_split BEFORE INSERT ON take_events WHEN NEW.summary LIKE 'Split into%' BEGIN SELECT RAISE(ABORT, 'injected failure'); END`.execute(
      server.ctx.db,
    )
    try {
      const [a, b] = sweep.pieces[4]
      const res = await designer.post(`/api/takes/${sweepTake}/split`, {
        segments: [
          { startSeconds: 0.25, endSeconds: 2.25 },
          { startSeconds: a / RATE, endSeconds: b / RATE },
        ],
      })
      expect(res.status).toBe(500)
    } finally {
      await sql`DROP TRIGGER fail_split`.execute(server.ctx.db)
    }
    expect([await takesIn(sessionId), storageFiles(), await jobCount()]).toEqual(before)
  })

  it('lets a recordist split only takes they uploaded', async () => {
    const admin = await signedIn(server.url, 'admin')
    const up = await uploadTake(
      admin,
      sessionId,
      encodeWav([buildSweep(23, 1, [], 8000).samples], {
        sampleRate: 8000,
        channels: 1,
        encoding: 'pcm',
        bitsPerSample: 16,
      }),
      'admin.wav',
    )
    const id = (await waitForTake(admin, up.body.take.id)).id
    const res = await recordist.post(`/api/takes/${id}/split`, { segments: [{ startSeconds: 0, endSeconds: 2 }] })
    expect(res.status).toBe(403)
    expect(res.body.error.message).toMatch(/only takes you uploaded/)
  })
})

describe('GET /api/takes/:id/loop-cycle', () => {
  it('answers one cycle as a float WAV (soxi): the range itself, or crossfaded into the start', async () => {
    const [a] = sweep.pieces[0]
    const start = a / RATE + 1
    const end = start + 0.5
    const get = async (q: string) =>
      designer.agent
        .get(`/api/takes/${sweepTake}/loop-cycle?${q}`)
        .buffer(true)
        .parse(binary as never)
    const plain = await get(`startSeconds=${start}&endSeconds=${end}`)
    expect(plain.status).toBe(200)
    const f = tmp.file('cycle.wav')
    fs.writeFileSync(f, plain.body as Buffer)
    expect(soxi(f)).toMatchObject({ rate: RATE, channels: 2, samples: RATE / 2, encoding: 'Floating Point PCM' })
    // ffmpeg's decode of the left channel equals the take's samples (24-bit, so within one step).
    const x = ffmpegF32(f).filter((_, i) => i % 2 === 0)
    const s0 = Math.round(start * RATE)
    for (const i of [0, 100, RATE / 2 - 1]) expect(Math.abs(x[i] - sweep.samples[s0 + i])).toBeLessThan(2 ** -22)
    // Crossfaded: the last sample is (nearly) the one just before the start, so the cycle joins smoothly.
    const faded = await get(`startSeconds=${start}&endSeconds=${end}&crossfadeMs=20`)
    fs.writeFileSync(f, faded.body as Buffer)
    const y = ffmpegF32(f).filter((_, i) => i % 2 === 0)
    expect(y.length).toBe(RATE / 2)
    expect(Math.abs(y[y.length - 1] - sweep.samples[s0 - 1])).toBeLessThan(0.01)
    expect(Math.abs(y[0] - sweep.samples[s0])).toBeLessThan(2 ** -22)
  })

  it('refuses a range outside the take or longer than a loop search reads', async () => {
    expect((await designer.get(`/api/takes/${sweepTake}/loop-cycle?startSeconds=1&endSeconds=999`)).status).toBe(400)
    expect((await designer.get(`/api/takes/${sweepTake}/loop-cycle?startSeconds=2&endSeconds=1`)).status).toBe(400)
    expect((await designer.get(`/api/takes/${sweepTake}/loop-cycle`)).status).toBe(400)
  })
})
