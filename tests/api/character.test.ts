// Character suggestions, the character filter, accepting suggestions in bulk
// and "more like this" on a real server. The takes are synthetic members of the
// families in tests/audio/character-signals.ts (built from each character's
// definition); what the server says is held to those definitions.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { encodeWav } from '../../server/audio/wav-writer'
import { RATE, soundMember } from '../audio/character-signals'

let server: TestServer
let recordist: Client
let designer: Client
let producer: Client
const ids: Record<string, number> = {}

const wav = (x: Float32Array) => encodeWav([x], { sampleRate: RATE, channels: 1, encoding: 'pcm', bitsPerSample: 24 })

/** Three seconds of a whine, then three of hiss: a region on the first half should match whines best. */
function mixed(): Float32Array {
  const a = soundMember('whine', 40)
  const b = soundMember('hiss', 40)
  const out = new Float32Array(a.length + b.length)
  out.set(a)
  out.set(b, a.length)
  return out
}

/**
 * A minute of hiss with three seconds of whine at 4.5 s: longer than the 8 × 4 s the analysis reads for
 * character, and the whine falls between two of its excerpts (at 0 and 8 s).
 */
function longWithWhine(): Float32Array {
  const out = new Float32Array(60 * RATE)
  for (let at = 0, k = 0; at < out.length; k++) {
    const piece = soundMember('hiss', 100 + k).subarray(0, out.length - at)
    out.set(piece, at)
    at += piece.length
  }
  out.set(soundMember('whine', 41), Math.round(4.5 * RATE))
  return out
}

beforeAll(async () => {
  server = await startTestServer()
  recordist = await signedIn(server.url, 'recordist')
  designer = await signedIn(server.url, 'designer')
  producer = await signedIn(server.url, 'producer')
  const session = await createSession(recordist, { title: 'Character bench' })
  const files: Record<string, Float32Array> = {
    whine1: soundMember('whine', 1),
    whine2: soundMember('whine', 2),
    whine3: soundMember('whine', 3),
    hiss1: soundMember('hiss', 1),
    hiss2: soundMember('hiss', 2),
    bursts1: soundMember('noise bursts', 1),
    bursts2: soundMember('noise bursts', 2),
    mixed: mixed(),
    long: longWithWhine(),
  }
  for (const [key, x] of Object.entries(files)) {
    const res = await uploadTake(recordist, session.id, wav(x), `${key}.wav`)
    expect(res.status).toBe(201)
    ids[key] = res.body.take.id
  }
  for (const id of Object.values(ids)) expect((await waitForTake(recordist, id, 120_000)).status).toBe('ready')
}, 240_000)

afterAll(async () => {
  await server?.stop()
})

describe('suggested tags', () => {
  it('a measured take carries its character and suggestions strongest first', async () => {
    const { take } = (await producer.get(`/api/takes/${ids.whine1}`).expect(200)).body
    expect(take.character.whineHz).toBeGreaterThan(500)
    expect(take.suggestedTags[0]).toMatchObject({ tag: 'whine' })
    expect(take.suggestedTags[0].confidence).toBeGreaterThanOrEqual(0.5)
    const hiss = (await producer.get(`/api/takes/${ids.hiss1}`).expect(200)).body.take
    expect(hiss.suggestedTags.map((t: { tag: string }) => t.tag)).toEqual(['hiss'])
  })

  it('the library filters by character', async () => {
    const res = await producer.get('/api/takes?character=whine&pageSize=200').expect(200)
    const found = res.body.items.map((t: { id: number }) => t.id)
    expect(found).toEqual(expect.arrayContaining([ids.whine1, ids.whine2, ids.whine3]))
    expect(found).not.toContain(ids.hiss1)
    expect(found).not.toContain(ids.bursts1)
    await producer.get('/api/takes?character=rumble').expect(400)
  })

  it('accepting in bulk moves suggestions into tags, only those asked for, once', async () => {
    const res = await recordist.post('/api/takes/suggested-tags/accept', {
      takeIds: [ids.whine1, ids.hiss1],
      tags: ['whine'],
    })
    expect(res.status).toBe(200)
    expect(res.body).toMatchObject({ updated: [ids.whine1], added: 1, skipped: [] })
    const take = (await recordist.get(`/api/takes/${ids.whine1}`).expect(200)).body.take
    expect(take.tags).toContain('whine')
    expect(take.suggestedTags.map((t: { tag: string }) => t.tag)).not.toContain('whine')
    const hiss = (await recordist.get(`/api/takes/${ids.hiss1}`).expect(200)).body.take
    expect(hiss.tags).not.toContain('hiss')
    // Without `tags`, every suggestion; a second call adds nothing.
    const all = await designer.post('/api/takes/suggested-tags/accept', { takeIds: [ids.hiss1, ids.whine1] })
    expect(all.body).toMatchObject({ updated: [ids.hiss1], added: 1 })
    const again = await designer.post('/api/takes/suggested-tags/accept', { takeIds: [ids.hiss1] })
    expect(again.body).toMatchObject({ updated: [], added: 0 })
    const history = (await designer.get(`/api/takes/${ids.hiss1}/history`).expect(200)).body.events
    expect(history.some((e: { summary: string }) => /suggestions: hiss/.test(e.summary))).toBe(true)
  })

  it('refuses what it cannot do with the one error shape', async () => {
    expect((await producer.post('/api/takes/suggested-tags/accept', { takeIds: [ids.whine2] })).status).toBe(403)
    const missing = await designer.post('/api/takes/suggested-tags/accept', { takeIds: [ids.whine2, 999999] })
    expect(missing.status).toBe(404)
    expect(missing.body.error.code).toBe('TAKE_NOT_FOUND')
    expect((await recordist.get(`/api/takes/${ids.whine2}`)).body.take.tags).not.toContain('whine')
    const empty = await designer.post('/api/takes/suggested-tags/accept', {})
    expect(empty.status).toBe(400)
    expect(empty.body.error.code).toBe('VALIDATION_FAILED')
  })
})

describe('more like this', () => {
  it('lists takes of the same family first, with scores in order', async () => {
    const res = await producer.get(`/api/takes/${ids.whine1}/similar?limit=3`).expect(200)
    const items = res.body.items as { take: { id: number }; score: number; region: unknown }[]
    expect(items.slice(0, 2).map((i) => i.take.id)).toEqual(expect.arrayContaining([ids.whine2, ids.whine3]))
    expect(items.map((i) => i.take.id)).not.toContain(ids.whine1)
    for (let i = 1; i < items.length; i++) expect(items[i].score).toBeLessThanOrEqual(items[i - 1].score)
    const bursts = (await producer.get(`/api/takes/${ids.bursts1}/similar?limit=1`).expect(200)).body.items
    expect(bursts[0].take.id).toBe(ids.bursts2)
  })

  it('names the region of a take that matches better than the whole', async () => {
    const region = await recordist.post(`/api/takes/${ids.mixed}/regions`, {
      name: 'tone half',
      startSeconds: 0,
      endSeconds: 3,
    })
    expect(region.status).toBe(201)
    const items = (await producer.get(`/api/takes/${ids.whine2}/similar?limit=10`).expect(200)).body.items
    const hit = items.find((i: { take: { id: number } }) => i.take.id === ids.mixed)
    expect(hit.region).toMatchObject({ name: 'tone half', startSeconds: 0, endSeconds: 3 })
  })

  it('gives a region between the excerpts of a long take a vector of its own', async () => {
    const region = await recordist.post(`/api/takes/${ids.long}/regions`, {
      name: 'whine inside',
      startSeconds: 4.5,
      endSeconds: 7.5,
    })
    expect(region.status).toBe(201)
    // Its frames are read after the answer, on the audio-task pool.
    await expect
      .poll(
        async () => {
          const items = (await producer.get(`/api/takes/${ids.whine2}/similar?limit=20`).expect(200)).body.items
          return items.find((i: { take: { id: number } }) => i.take.id === ids.long)?.region?.name ?? null
        },
        { timeout: 20_000, interval: 250 },
      )
      .toBe('whine inside')
  })

  it('never offers a removed take; 404 for an unknown one', async () => {
    await recordist.agent.delete(`/api/takes/${ids.whine3}`).set('x-csrf-token', recordist.token).expect(200)
    const items = (await producer.get(`/api/takes/${ids.whine1}/similar?limit=20`).expect(200)).body.items
    expect(items.map((i: { take: { id: number } }) => i.take.id)).not.toContain(ids.whine3)
    const res = await producer.get('/api/takes/999999/similar')
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('TAKE_NOT_FOUND')
    expect((await producer.get(`/api/takes/${ids.whine1}/similar?limit=0`)).status).toBe(400)
  })
})
