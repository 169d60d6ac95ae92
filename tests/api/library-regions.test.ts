// Regions of a take: named time ranges, checked against the take's duration.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { CreateRegionBody, RegionResponse, RegionsResponse } from '@shared/schemas/library'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { insertSession, insertTakeRow, userIds } from './library-fixtures'

let server: TestServer
let designer: Client
let producer: Client
let take: number
let unknownLength: number

beforeAll(async () => {
  server = await startTestServer()
  const users = await userIds(server.ctx.db)
  const session = await insertSession(server.ctx.db, 'Region bench')
  take = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Dimmer buzz',
    duration: 30,
  })
  unknownLength = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Header only',
    duration: null,
  })
  designer = await signedIn(server.url, 'designer')
  producer = await signedIn(server.url, 'producer')
})
afterAll(async () => {
  await server.stop()
})

const regions = async (id = take) =>
  RegionsResponse.parse((await producer.get(`/api/takes/${id}/regions`).expect(200)).body).regions as {
    id: number
    name: string
    startSeconds: number
    endSeconds: number
  }[]

describe('regions', () => {
  it('creates regions and lists them by start time for everyone', async () => {
    const late = await designer.post(`/api/takes/${take}/regions`, {
      name: '  Clean loop ',
      startSeconds: 12.5,
      endSeconds: 20,
    })
    expect(late.status).toBe(201)
    RegionResponse.parse(late.body)
    expect(late.body.region).toMatchObject({
      takeId: take,
      name: 'Clean loop',
      startSeconds: 12.5,
      endSeconds: 20,
      createdBy: { name: 'Dana Humbucker' },
    })
    expect(typeof late.body.region.createdAt).toBe('string')
    const early = await designer.post(`/api/takes/${take}/regions`, {
      name: 'Switch-on click',
      startSeconds: 0,
      endSeconds: 0.25,
    })
    expect(early.status).toBe(201)
    const whole = await designer.post(`/api/takes/${take}/regions`, {
      name: 'Everything',
      startSeconds: 0,
      endSeconds: 30,
    })
    expect(whole.status).toBe(201)
    expect((await regions()).map((r) => r.name)).toEqual(['Switch-on click', 'Everything', 'Clean loop'])
  })

  it('keeps 0 ≤ start < end ≤ duration and a name of 1 to 120 characters', async () => {
    const bad: [object, string][] = [
      [{ name: 'Negative', startSeconds: -1, endSeconds: 2 }, 'VALIDATION_FAILED'],
      [{ name: 'Backwards', startSeconds: 5, endSeconds: 4 }, 'VALIDATION_FAILED'],
      [{ name: 'Empty', startSeconds: 5, endSeconds: 5 }, 'VALIDATION_FAILED'],
      [{ name: 'Too long', startSeconds: 25, endSeconds: 30.01 }, 'OUT_OF_RANGE'],
      [{ name: '', startSeconds: 1, endSeconds: 2 }, 'VALIDATION_FAILED'],
      [{ name: '   ', startSeconds: 1, endSeconds: 2 }, 'VALIDATION_FAILED'],
      [{ name: 'n'.repeat(121), startSeconds: 1, endSeconds: 2 }, 'VALIDATION_FAILED'],
      [{ name: 'Text times', startSeconds: '1', endSeconds: '2' }, 'VALIDATION_FAILED'],
      [{ startSeconds: 1, endSeconds: 2 }, 'VALIDATION_FAILED'],
      // Shorter than MIN_SELECTION_SECONDS (20 ms, common practice for the shortest one-shot): a click, not a sound.
      [{ name: 'Ten ms', startSeconds: 17.8, endSeconds: 17.81 }, 'VALIDATION_FAILED'],
      [{ name: 'Nineteen ms', startSeconds: 1, endSeconds: 1.019 }, 'VALIDATION_FAILED'],
    ]
    for (const [body, code] of bad) {
      const res = await designer.post(`/api/takes/${take}/regions`, body)
      expect(res.status, JSON.stringify(body)).toBe(400)
      expect(res.body.error.code, JSON.stringify(body)).toBe(code)
    }
    const short = await designer.post(`/api/takes/${take}/regions`, { name: 'Tick', startSeconds: 1, endSeconds: 1.01 })
    expect(short.body.error.message).toContain('at least 20 ms')
    expect(
      (await designer.post(`/api/takes/${take}/regions`, { name: 'n'.repeat(120), startSeconds: 1, endSeconds: 2 }))
        .status,
    ).toBe(201)
    // Exactly 20 ms, as the bench sends it (times to the millisecond), is long enough.
    expect(CreateRegionBody.safeParse({ name: 'Shortest', startSeconds: 17.8, endSeconds: 17.82 }).success).toBe(true)
    expect(await regions()).toHaveLength(4)
  })

  it('accepts any end on a take whose duration is not known', async () => {
    const res = await designer.post(`/api/takes/${unknownLength}/regions`, {
      name: 'Somewhere',
      startSeconds: 100,
      endSeconds: 200,
    })
    expect(res.status).toBe(201)
  })

  it('changes a region, checking the result as a whole', async () => {
    const [first] = await regions()
    const moved = await designer.patch(`/api/takes/${take}/regions/${first.id}`, { endSeconds: 0.5 })
    expect(moved.status).toBe(200)
    expect(moved.body.region).toMatchObject({ id: first.id, name: 'Switch-on click', startSeconds: 0, endSeconds: 0.5 })
    const renamed = await designer.patch(`/api/takes/${take}/regions/${first.id}`, { name: 'Click' })
    expect(renamed.body.region).toMatchObject({ name: 'Click', startSeconds: 0, endSeconds: 0.5 })
    // Start after the stored end: refused although each value alone is fine.
    const crossed = await designer.patch(`/api/takes/${take}/regions/${first.id}`, { startSeconds: 3 })
    expect(crossed.status).toBe(400)
    expect(crossed.body.error.code).toBe('OUT_OF_RANGE')
    const past = await designer.patch(`/api/takes/${take}/regions/${first.id}`, { endSeconds: 31 })
    expect(past.status).toBe(400)
    const tooShort = await designer.patch(`/api/takes/${take}/regions/${first.id}`, { endSeconds: 0.01 })
    expect(tooShort.status).toBe(400)
    expect(tooShort.body.error.code).toBe('RANGE_TOO_SHORT')
    expect((await regions()).find((r) => r.id === first.id)).toMatchObject({
      name: 'Click',
      startSeconds: 0,
      endSeconds: 0.5,
    })
  })

  it('deletes a region; comments on it stay, no longer tied to it', async () => {
    const region = (await regions()).find((r) => r.name === 'Clean loop')!
    const comment = await producer.post(`/api/takes/${take}/comments`, {
      body: 'Loop point clicks here',
      regionId: region.id,
    })
    expect(comment.status).toBe(201)
    expect(comment.body.comment.regionId).toBe(region.id)
    const res = await designer.delete(`/api/takes/${take}/regions/${region.id}`)
    expect(res.status).toBe(200)
    expect((await regions()).some((r) => r.id === region.id)).toBe(false)
    const comments = (await producer.get(`/api/takes/${take}/comments`)).body.comments
    expect(comments).toHaveLength(1)
    expect(comments[0]).toMatchObject({ id: comment.body.comment.id, body: 'Loop point clicks here', regionId: null })
    expect((await designer.delete(`/api/takes/${take}/regions/${region.id}`)).status).toBe(404)
  })

  it('answers 404 for a region of another take, and for an unknown take', async () => {
    const [mine] = await regions()
    const res = await designer.patch(`/api/takes/${unknownLength}/regions/${mine.id}`, { name: 'Stolen' })
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('REGION_NOT_FOUND')
    expect((await designer.get('/api/takes/999999/regions')).status).toBe(404)
    expect(
      (await designer.post('/api/takes/999999/regions', { name: 'x', startSeconds: 0, endSeconds: 1 })).status,
    ).toBe(404)
  })

  it('writes each change into the history', async () => {
    const events = (await producer.get(`/api/takes/${take}/history`)).body.events as {
      kind: string
      summary: string
      user: { name: string }
    }[]
    const kinds = events.map((e) => e.kind)
    expect(kinds.filter((k) => k === 'region-added')).toHaveLength(4)
    expect(kinds.filter((k) => k === 'region-changed')).toHaveLength(2)
    expect(kinds.filter((k) => k === 'region-removed')).toHaveLength(1)
    expect(events.find((e) => e.kind === 'region-removed')).toMatchObject({
      summary: 'Region \u201cClean loop\u201d 0:12.5\u20130:20.0 removed',
      user: { name: 'Dana Humbucker' },
    })
    expect(events.find((e) => e.kind === 'region-changed')!.summary).toBe(
      'Region \u201cClick\u201d: renamed \u201cSwitch-on click\u201d \u2192 \u201cClick\u201d',
    )
    expect(events.filter((e) => e.kind === 'region-added').map((e) => e.summary)).toContain(
      'Region \u201cSwitch-on click\u201d 0:00.0\u20130:00.3',
    )
  })
})
