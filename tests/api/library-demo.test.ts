// The demo scenario's library: tagged takes, regions and threads by the invented team.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'

let server: TestServer
let designer: Client

beforeAll(async () => {
  // With the demo audio, but without measuring it: only the library around the takes is checked here.
  server = await startTestServer({ demoAudio: true, runJobs: false })
  designer = await signedIn(server.url, 'designer')
})
afterAll(async () => {
  await server.stop()
})

interface ListedTake {
  id: number
  filename: string
  tags: string[]
}

describe('demo library', () => {
  it('tags every demo take and finds them by tag', async () => {
    const list = (await designer.get('/api/takes?pageSize=200').expect(200)).body.items as ListedTake[]
    expect(list).toHaveLength(7)
    for (const t of list) expect(t.tags.length, t.filename).toBeGreaterThan(0)
    const all = new Set(list.flatMap((t) => t.tags))
    for (const tag of ['hum', 'whine', 'chirp', 'crackle', 'data burst', 'drone']) expect(all.has(tag), tag).toBe(true)
    expect((await designer.get('/api/takes?tag=hum')).body.total).toBe(3)
    expect((await designer.get('/api/tags')).body.tags[0]).toEqual({ tag: 'hum', count: 3 })
  })

  it('has regions and threads with a reply, a resolved one, a timed one and a mention', async () => {
    const list = (await designer.get('/api/takes?pageSize=200')).body.items as ListedTake[]
    let regions = 0
    const comments: {
      parentId: number | null
      resolved: boolean
      atSeconds: number | null
      mentions: unknown[]
      author: { name: string }
    }[] = []
    for (const t of list) {
      regions += (await designer.get(`/api/takes/${t.id}/regions`)).body.regions.length
      comments.push(...(await designer.get(`/api/takes/${t.id}/comments`)).body.comments)
    }
    expect(regions).toBeGreaterThanOrEqual(2)
    expect(comments.some((c) => c.parentId !== null)).toBe(true)
    expect(comments.some((c) => c.resolved)).toBe(true)
    expect(comments.some((c) => c.atSeconds !== null)).toBe(true)
    expect(comments.some((c) => c.mentions.length > 0)).toBe(true)
    expect(new Set(comments.map((c) => c.author.name)).size).toBeGreaterThanOrEqual(4)
  })

  it('shows the work in each take\u2019s history', async () => {
    const hum = (await designer.get('/api/takes?q=transformer')).body.items[0] as ListedTake
    const kinds = ((await designer.get(`/api/takes/${hum.id}/history`)).body.events as { kind: string }[]).map(
      (e) => e.kind,
    )
    for (const k of ['uploaded', 'tagged', 'region-added', 'commented', 'replied']) expect(kinds, k).toContain(k)
  })
})
