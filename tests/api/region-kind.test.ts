// A region's kind ('one-shot', 'loop', 'drone' or none): set when the region is
// made, changed or cleared later, refused when it is not one of the three.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { RegionResponse, RegionsResponse } from '@shared/schemas/library'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { insertSession, insertTakeRow, userIds } from './library-fixtures'

let server: TestServer
let designer: Client
let take: number

beforeAll(async () => {
  server = await startTestServer()
  const users = await userIds(server.ctx.db)
  const session = await insertSession(server.ctx.db, 'Kinds bench')
  take = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Relay',
    duration: 20,
  })
  designer = await signedIn(server.url, 'designer')
})
afterAll(async () => {
  await server.stop()
})

describe('region kind', () => {
  it('is kept from creation, changed and cleared by PATCH, and null for plain regions', async () => {
    const made = await designer.post(`/api/takes/${take}/regions`, {
      name: 'Relay click',
      startSeconds: 1,
      endSeconds: 1.2,
      kind: 'one-shot',
    })
    expect(made.status, JSON.stringify(made.body)).toBe(201)
    const r = RegionResponse.parse(made.body).region
    expect(r.kind).toBe('one-shot')
    const plain = RegionResponse.parse(
      (await designer.post(`/api/takes/${take}/regions`, { name: 'Rest', startSeconds: 3, endSeconds: 9 })).body,
    ).region
    expect(plain.kind).toBeNull()
    const looped = await designer.patch(`/api/takes/${take}/regions/${plain.id}`, { kind: 'loop' })
    expect(RegionResponse.parse(looped.body).region.kind).toBe('loop')
    const cleared = await designer.patch(`/api/takes/${take}/regions/${r.id}`, { kind: null })
    expect(RegionResponse.parse(cleared.body).region.kind).toBeNull()
    const list = RegionsResponse.parse((await designer.get(`/api/takes/${take}/regions`)).body).regions
    expect(list.map((x) => x.kind)).toEqual([null, 'loop'])
    const history = (await designer.get(`/api/takes/${take}/history`)).body.events as { summary: string }[]
    expect(history.some((e) => e.summary.includes('kind none \u2192 loop'))).toBe(true)
  })

  it('refuses a kind that is not one-shot, loop or drone', async () => {
    const res = await designer.post(`/api/takes/${take}/regions`, {
      name: 'x',
      startSeconds: 1,
      endSeconds: 2,
      kind: 'pad',
    })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
  })
})
