// CPU-heavy answers (spectrograms, pack item previews, range measurements) are
// made on worker threads, so the API's event loop stays free for everyone else,
// and one member cannot queue more than a few of them at once.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { binary, newSession, SIGNALS, uploadMeasured } from '../api/packs-fixtures'
import { makeTmpDir } from '../helpers/audio-files'

let server: TestServer
let designer: Client
let producer: Client
let takeId: number
let packId: number
let itemId: number
const tmp = makeTmpDir('strayfield-heavy-')

beforeAll(async () => {
  // One worker thread and a per-user limit of 3 (the default), so the queue is real.
  server = await startTestServer({ heavyThreads: 1 })
  const recordist = await signedIn(server.url, 'recordist')
  designer = await signedIn(server.url, 'designer')
  producer = await signedIn(server.url, 'producer')
  const take = await uploadMeasured(recordist, await newSession(recordist), SIGNALS.noise(tmp.file('noise.wav'), 60))
  takeId = take.id
  const pack = await designer.post('/api/packs', { name: 'Heavy work pack' }).expect(201)
  packId = pack.body.pack.id
  // A range, not the whole take: the server measures it (on a worker thread) when it is added.
  const item = await designer
    .post(`/api/packs/${packId}/items`, { takeId, startSeconds: 1, endSeconds: 50 })
    .expect(201)
  itemId = item.body.item.id
  expect(item.body.item.sourceLevels?.measuredFrom ?? 'range').toBe('range')
}, 120_000)
afterAll(async () => {
  await server?.stop()
  tmp.cleanup()
})

/** Detailed 30 s excerpts at the largest size: each takes the renderer seconds of CPU. */
const excerpt = (c: Client, start: number) =>
  c
    .get(`/api/takes/${takeId}/spectrogram.png?start=${start}&end=${start + 30}&width=3200&height=512`)
    .buffer(true)
    .parse(binary as never)

describe('heavy work off the event loop', () => {
  it('keeps /api/health answering promptly while spectrograms and a preview render', async () => {
    const work = Promise.all([
      excerpt(designer, 0),
      excerpt(designer, 5),
      excerpt(producer, 10),
      designer
        .get(`/api/packs/${packId}/items/${itemId}/preview`)
        .buffer(true)
        .parse(binary as never),
    ])
    let done = false
    void work.finally(() => (done = true))
    const latencies: number[] = []
    while (!done) {
      const t = performance.now()
      await designer.get('/api/health').expect(200)
      latencies.push(performance.now() - t)
      await new Promise((r) => setTimeout(r, 20))
    }
    const answers = await work
    expect(answers.map((r) => r.status)).toEqual([200, 200, 200, 200])
    // Several seconds of rendering happened meanwhile (one worker thread, three 3200×512 excerpts and a
    // render). On the event loop one such excerpt held it for 4.4–6.9 s (measured on this shared 2-core
    // machine at load average 18; about 1.5 s idle), so any render on the loop exceeds the bound below by
    // far. The bound is generous because the test client shares the loop and the machine runs many other
    // processes (a 517 ms outlier was seen at load average 22 with the renders off the loop); it fails
    // only when the loop is held by work.
    expect(latencies.length).toBeGreaterThan(5)
    expect(Math.max(...latencies)).toBeLessThan(1000)
  }, 120_000)

  it('answers 429 TOO_BUSY when one member asks for more than 3 renders at once, and serves the others', async () => {
    const answers = await Promise.all([1, 2, 3, 4, 5].map((k) => excerpt(designer, k + 0.5)))
    const statuses = answers.map((r) => r.status).sort()
    expect(statuses.filter((s) => s === 200)).toHaveLength(3)
    const refused = answers.filter((r) => r.status === 429)
    expect(refused).toHaveLength(2)
    const body = JSON.parse(refused[0].body.toString())
    expect(body.error.code).toBe('TOO_BUSY')
    expect(body.error.message).toMatch(/wait/)
  }, 120_000)

  it("counts spectrograms apart: a member's three pictures leave their pack preview free to run", async () => {
    const answers = await Promise.all([
      ...[1, 2, 3].map((k) => excerpt(designer, k + 0.25)),
      designer
        .get(`/api/packs/${packId}/items/${itemId}/preview`)
        .buffer(true)
        .parse(binary as never),
    ])
    expect(answers.map((r) => r.status)).toEqual([200, 200, 200, 200])
  }, 120_000)
})
