// Editing takes: PATCH /api/takes/:id, POST /api/takes/bulk, the tag and
// state suggestions, and the history every change leaves behind.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { BulkEditResponse, HistoryResponse, StatesResponse, TagsResponse, TakeResponse } from '@shared/schemas/library'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { seedLibrary, type SeededLibrary } from './library-fixtures'

let server: TestServer
let lib: SeededLibrary
let designer: Client
let recordist: Client

beforeAll(async () => {
  server = await startTestServer()
  lib = await seedLibrary(server.ctx.db)
  designer = await signedIn(server.url, 'designer')
  recordist = await signedIn(server.url, 'recordist')
})
afterAll(async () => {
  await server.stop()
})

const tagsOf = async (id: number) => (await designer.get(`/api/takes/${id}`).expect(200)).body.take.tags as string[]
const historyOf = async (id: number) =>
  HistoryResponse.parse((await designer.get(`/api/takes/${id}/history`).expect(200)).body).events as {
    id: number
    kind: string
    summary: string
    user: { id: number; name: string } | null
    createdAt: string
  }[]

describe('PATCH /api/takes/:id', () => {
  it('changes title, description and notes, and answers with the whole take', async () => {
    const res = await designer.patch(`/api/takes/${lib.take.D}`, {
      title: '  Monitor whine, bright setting ',
      description: 'Coil on the back panel',
      notes: 'Use the first 5 s',
    })
    expect(res.status).toBe(200)
    TakeResponse.parse(res.body)
    expect(res.body.take).toMatchObject({
      id: lib.take.D,
      title: 'Monitor whine, bright setting',
      description: 'Coil on the back panel',
      notes: 'Use the first 5 s',
    })
    expect(res.body.take.updatedAt).not.toBe('2026-11-04T10:00:00.000Z')
    const again = (await designer.get(`/api/takes/${lib.take.D}`)).body.take
    expect(again.title).toBe('Monitor whine, bright setting')
    const [latest] = await historyOf(lib.take.D)
    expect(latest).toMatchObject({
      kind: 'edited',
      summary: 'Edited title, description and notes',
      user: { id: lib.user.designer, name: 'Dana Humbucker' },
    })
  })

  it('normalises tags: trimmed, lower-case, spaces collapsed, duplicates dropped', async () => {
    const res = await designer.patch(`/api/takes/${lib.take.B}`, {
      tags: ['  Mains  HUM ', 'drone', 'DRONE', 'Ünderground\tRumble'],
    })
    expect(res.status).toBe(200)
    expect(res.body.take.tags).toEqual(['drone', 'mains hum', 'ünderground rumble'])
    const [latest] = await historyOf(lib.take.B)
    expect(latest).toMatchObject({
      kind: 'tagged',
      summary: 'Tags +mains hum +ünderground rumble \u2212hum',
      user: { id: lib.user.designer },
    })
  })

  it('refuses a tag over 40 characters, an empty tag and more than 30 tags, changing nothing', async () => {
    const before = await tagsOf(lib.take.B)
    for (const tags of [['x'.repeat(41)], ['   '], Array.from({ length: 31 }, (_, i) => `tag ${i}`)]) {
      const res = await designer.patch(`/api/takes/${lib.take.B}`, { tags })
      expect(res.status).toBe(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
    expect(await tagsOf(lib.take.B)).toEqual(before)
    // Exactly at the limits is fine: 30 tags of 40 characters.
    const max = Array.from({ length: 30 }, (_, i) => `${String(i).padStart(2, '0')}${'y'.repeat(38)}`)
    expect((await designer.patch(`/api/takes/${lib.take.G}`, { tags: max })).body.take.tags).toHaveLength(30)
    await designer.patch(`/api/takes/${lib.take.G}`, { tags: [] }).expect(200)
  })

  it('replaces device links with states, and names a device that does not exist', async () => {
    const bad = await designer.patch(`/api/takes/${lib.take.C}`, {
      sources: [
        { sourceId: lib.source.fan, state: 'speed 1' },
        { sourceId: 987654, state: 'on' },
      ],
    })
    expect(bad.status).toBe(400)
    expect(bad.body.error.code).toBe('SOURCE_NOT_FOUND')
    expect(bad.body.error.message).toContain('987654')
    expect(bad.body.error.details.sourceIds).toEqual([987654])
    expect((await designer.get(`/api/takes/${lib.take.C}`)).body.take.sources).toEqual([
      { sourceId: lib.source.fan, name: 'Desk fan motor', kind: 'motor', state: 'speed 2' },
    ])

    const res = await designer.patch(`/api/takes/${lib.take.C}`, {
      sources: [
        { sourceId: lib.source.fan, state: ' speed 1 ' },
        { sourceId: lib.source.monitor, state: 'standby' },
      ],
    })
    expect(res.status).toBe(200)
    expect(res.body.take.sources).toEqual([
      { sourceId: lib.source.fan, name: 'Desk fan motor', kind: 'motor', state: 'speed 1' },
      { sourceId: lib.source.monitor, name: 'Desk monitor', kind: 'display', state: 'standby' },
    ])
    const [latest] = await historyOf(lib.take.C)
    expect(latest.kind).toBe('sources')
    expect(latest.summary).toBe('Devices +Desk monitor (standby); Desk fan motor: speed 2 \u2192 speed 1')
  })

  it('refuses the same device twice and an empty title', async () => {
    const twice = await designer.patch(`/api/takes/${lib.take.C}`, {
      sources: [{ sourceId: lib.source.fan }, { sourceId: lib.source.fan, state: 'x' }],
    })
    expect(twice.status).toBe(400)
    const empty = await designer.patch(`/api/takes/${lib.take.C}`, { title: '   ' })
    expect(empty.status).toBe(400)
    expect(empty.body.error.message).toMatch(/title/)
  })

  it('records nothing when nothing changes', async () => {
    const before = await historyOf(lib.take.A)
    const take = (await designer.get(`/api/takes/${lib.take.A}`)).body.take
    const res = await designer.patch(`/api/takes/${lib.take.A}`, {
      title: take.title,
      tags: take.tags,
      sources: take.sources.map((s: { sourceId: number; state: string }) => ({ sourceId: s.sourceId, state: s.state })),
    })
    expect(res.status).toBe(200)
    expect(res.body.take.updatedAt).toBe(take.updatedAt)
    expect(await historyOf(lib.take.A)).toEqual(before)
  })

  it('answers 404 TAKE_NOT_FOUND for an unknown take', async () => {
    const res = await designer.patch('/api/takes/999999', { title: 'Nothing' })
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('TAKE_NOT_FOUND')
  })

  it("lets a recordist edit takes they uploaded and refuses others' with a clear 403", async () => {
    const own = await recordist.patch(`/api/takes/${lib.take.E}`, { notes: 'Key-up at 0:03' })
    expect(own.status).toBe(200)
    expect((await historyOf(lib.take.E))[0].user).toEqual({ id: lib.user.recordist, name: 'Rory Coilwright' })

    const other = await recordist.patch(`/api/takes/${lib.take.D}`, { notes: 'mine now' })
    expect(other.status).toBe(403)
    expect(other.body.error.code).toBe('FORBIDDEN')
    expect(other.body.error.message).toBe(
      `You can edit only takes you uploaded (take ${lib.take.D} was uploaded by Dana Humbucker)`,
    )
    const orphan = await recordist.patch(`/api/takes/${lib.take.F}`, { notes: 'no uploader' })
    expect(orphan.status).toBe(403)
    expect((await designer.get(`/api/takes/${lib.take.D}`)).body.take.notes).toBe('Use the first 5 s')
  })
})

describe('POST /api/takes/bulk', () => {
  it('adds and removes tags on many takes in one go, and reports how many changed', async () => {
    await designer.patch(`/api/takes/${lib.take.A}`, { tags: ['whine', 'power supply'] }).expect(200)
    await designer.patch(`/api/takes/${lib.take.E}`, { tags: ['data burst', 'chirp'] }).expect(200)
    const res = await designer.post('/api/takes/bulk', {
      ids: [lib.take.A, lib.take.E, lib.take.A],
      addTags: ['Keeper', 'chirp'],
      removeTags: ['whine'],
    })
    expect(res.status).toBe(200)
    BulkEditResponse.parse(res.body)
    expect(res.body.updated).toBe(2)
    expect(res.body.takes.map((t: { id: number }) => t.id)).toEqual([lib.take.A, lib.take.E])
    expect(res.body.takes[0].tags).toEqual(['chirp', 'keeper', 'power supply'])
    expect(res.body.takes[1].tags).toEqual(['chirp', 'data burst', 'keeper'])
    expect((await historyOf(lib.take.A))[0]).toMatchObject({
      kind: 'tagged',
      summary: 'Tags +keeper +chirp \u2212whine (bulk edit)',
      user: { id: lib.user.designer },
    })
    expect((await historyOf(lib.take.E))[0].summary).toBe('Tags +keeper (bulk edit)')

    const again = await designer.post('/api/takes/bulk', { ids: [lib.take.A, lib.take.E], addTags: ['keeper'] })
    expect(again.body.updated).toBe(0)
  })

  it('replaces device links and moves takes to another capture session', async () => {
    const res = await designer.post('/api/takes/bulk', {
      ids: [lib.take.B, lib.take.G],
      sources: [{ sourceId: lib.source.workstation, state: 'rendering' }],
      sessionId: lib.session.basement,
    })
    expect(res.status).toBe(200)
    expect(res.body.updated).toBe(2)
    for (const t of res.body.takes) {
      expect(t.sessionId).toBe(lib.session.basement)
      expect(t.sessionTitle).toBe('Basement plant room')
      expect(t.sources).toEqual([
        { sourceId: lib.source.workstation, name: 'Tower workstation', kind: 'computer', state: 'rendering' },
      ])
    }
    const kinds = (await historyOf(lib.take.B))
      .slice(0, 2)
      .map((e) => e.kind)
      .sort()
    expect(kinds).toEqual(['moved', 'sources'])
    expect((await historyOf(lib.take.B)).find((e) => e.kind === 'moved')!.summary).toBe(
      'Moved from capture session \u201cWorkshop bench sweep\u201d to \u201cBasement plant room\u201d',
    )
    // The search index follows: the takes are found by their new session and device state.
    const found = await designer.get('/api/takes?q=rendering+basement').expect(200)
    expect(found.body.items.map((t: { id: number }) => t.id).sort()).toEqual([lib.take.B, lib.take.G].sort())
    const bySession = await designer.get(`/api/takes?sessionId=${lib.session.basement}`).expect(200)
    expect(bySession.body.total).toBe(4)
  })

  it('answers 404 naming every missing id and changes nothing', async () => {
    const before = await tagsOf(lib.take.C)
    const res = await designer.post('/api/takes/bulk', { ids: [lib.take.C, 888888, 777777], addTags: ['never'] })
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('TAKE_NOT_FOUND')
    expect(res.body.error.message).toContain('888888, 777777')
    expect(res.body.error.details.missingIds).toEqual([888888, 777777])
    expect(await tagsOf(lib.take.C)).toEqual(before)
  })

  it('refuses an unknown device or capture session, changing nothing', async () => {
    const before = await tagsOf(lib.take.C)
    const dev = await designer.post('/api/takes/bulk', {
      ids: [lib.take.C],
      addTags: ['never'],
      sources: [{ sourceId: 555555 }],
    })
    expect(dev.status).toBe(400)
    expect(dev.body.error.code).toBe('SOURCE_NOT_FOUND')
    expect(dev.body.error.message).toContain('555555')
    const ses = await designer.post('/api/takes/bulk', { ids: [lib.take.C], addTags: ['never'], sessionId: 444444 })
    expect(ses.status).toBe(400)
    expect(ses.body.error.code).toBe('SESSION_NOT_FOUND')
    expect(ses.body.error.message).toContain('444444')
    expect(await tagsOf(lib.take.C)).toEqual(before)
  })

  it('rolls back every take when one would pass 30 tags', async () => {
    const near = Array.from({ length: 29 }, (_, i) => `filler ${i}`)
    await designer.patch(`/api/takes/${lib.take.H}`, { tags: near }).expect(200)
    const beforeD = await tagsOf(lib.take.D)
    const res = await designer.post('/api/takes/bulk', {
      ids: [lib.take.D, lib.take.H],
      addTags: ['one more', 'and another'],
    })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('TOO_MANY_TAGS')
    expect(res.body.error.details.takeIds).toEqual([lib.take.H])
    expect(await tagsOf(lib.take.D)).toEqual(beforeD)
    expect(await tagsOf(lib.take.H)).toHaveLength(29)
    await designer.patch(`/api/takes/${lib.take.H}`, { tags: ['crackle'] }).expect(200)
  })

  it('refuses a body that asks for nothing, or adds and removes the same tag', async () => {
    for (const body of [
      { ids: [lib.take.A] },
      { ids: [], addTags: ['x'] },
      { ids: [lib.take.A], addTags: ['Hum'], removeTags: ['hum '] },
    ]) {
      const res = await designer.post('/api/takes/bulk', body)
      expect(res.status, JSON.stringify(body)).toBe(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
  })
})

describe('GET /api/tags and GET /api/states', () => {
  it('suggests tags most used first, with counts, filtered by a prefix', async () => {
    const rows = await server.ctx.db.selectFrom('take_tags').select('tag').execute()
    const counts = new Map<string, number>()
    for (const r of rows) counts.set(r.tag, (counts.get(r.tag) ?? 0) + 1)
    const expected = [...counts]
      .map(([tag, count]) => ({ tag, count }))
      .sort((a, b) => b.count - a.count || (a.tag < b.tag ? -1 : 1))

    const res = await designer.get('/api/tags?limit=500')
    expect(res.status).toBe(200)
    TagsResponse.parse(res.body)
    expect(res.body.tags).toEqual(expected)
    expect(res.body.tags[0]).toEqual({ tag: 'chirp', count: 3 })

    const prefixed = await designer.get(`/api/tags?q=${encodeURIComponent(' CH')}`)
    expect(prefixed.body.tags).toEqual([{ tag: 'chirp', count: 3 }])
    expect((await designer.get('/api/tags?q=dat')).body.tags).toEqual([{ tag: 'data burst', count: 1 }])
    expect((await designer.get('/api/tags?q=%25')).body.tags).toEqual([])
    expect((await designer.get('/api/tags?limit=2')).body.tags).toHaveLength(2)
  })

  it('suggests operating states from earlier links, for one device or all', async () => {
    await designer
      .patch(`/api/takes/${lib.take.D}`, { sources: [{ sourceId: lib.source.monitor, state: 'standby' }] })
      .expect(200)
    const monitor = await designer.get(`/api/states?sourceId=${lib.source.monitor}`)
    expect(monitor.status).toBe(200)
    StatesResponse.parse(monitor.body)
    expect(monitor.body.states).toEqual([{ state: 'standby', count: 2 }])

    const all = await designer.get('/api/states')
    const links = await server.ctx.db.selectFrom('take_sources').select('state').where('state', '!=', '').execute()
    expect(all.body.states.reduce((n: number, s: { count: number }) => n + s.count, 0)).toBe(links.length)
    expect(all.body.states.slice(0, 2)).toEqual([
      { state: 'rendering', count: 2 },
      { state: 'standby', count: 2 },
    ])
    expect((await designer.get('/api/states?q=SPE')).body.states).toEqual([
      { state: 'speed 1', count: 1 },
      { state: 'speed 3', count: 1 },
    ])
  })
})

describe('GET /api/takes/:id/history', () => {
  it('lists every event newest first with who did it', async () => {
    const take = await designer.post('/api/takes/bulk', { ids: [lib.take.F], addTags: ['archive'] }).expect(200)
    expect(take.body.updated).toBe(1)
    await designer.patch(`/api/takes/${lib.take.F}`, { title: 'Workstation seek chirps, drive bay' }).expect(200)
    const events = await historyOf(lib.take.F)
    expect(events.map((e) => e.kind)).toEqual(['edited', 'tagged'])
    expect(events[0]).toMatchObject({
      summary: 'Edited title',
      user: { id: lib.user.designer, name: 'Dana Humbucker' },
    })
    expect(typeof events[0].createdAt).toBe('string')
    expect(events[0].id).toBeGreaterThan(events[1].id)
  })

  it('answers 404 for an unknown take', async () => {
    expect((await designer.get('/api/takes/999999/history')).status).toBe(404)
  })
})
