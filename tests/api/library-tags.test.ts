// The designer's library tools on the server: the tag manager (counts, rename,
// merge, each change in the takes' history), the library query as CSV, and the
// comment box's @-picker (members, and who a draft would notify).
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { HistoryResponse } from '@shared/schemas/library'
import { AllTagsResponse, TagChangeResponse } from '@shared/schemas/tags'
import { MentionMembersResponse, MentionPreviewResponse } from '@shared/schemas/mentions'
import { csvCell, csvLine } from '../../server/core/csv'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { FIXTURE_TAKES, seedLibrary, type SeededLibrary } from './library-fixtures'

let server: TestServer
let lib: SeededLibrary
let designer: Client
let recordist: Client
let producer: Client

beforeAll(async () => {
  server = await startTestServer()
  lib = await seedLibrary(server.ctx.db)
  designer = await signedIn(server.url, 'designer')
  recordist = await signedIn(server.url, 'recordist')
  producer = await signedIn(server.url, 'producer')
})
afterAll(async () => {
  await server.stop()
})

const tagsOf = async (id: number) => (await designer.get(`/api/takes/${id}`).expect(200)).body.take.tags as string[]
const latestEvent = async (id: number) =>
  HistoryResponse.parse((await designer.get(`/api/takes/${id}/history`).expect(200)).body).events[0]
const counts = async () =>
  Object.fromEntries(
    AllTagsResponse.parse((await designer.get('/api/tags/all').expect(200)).body).tags.map((t) => [t.tag, t.count]),
  )

describe('tag manager', () => {
  it('lists every tag A to Z with its count of takes', async () => {
    const res = await recordist.get('/api/tags/all').expect(200)
    const tags = AllTagsResponse.parse(res.body).tags
    expect(tags.map((t) => t.tag)).toEqual([...tags.map((t) => t.tag)].sort())
    // From the fixture: hum on B and C, chirp on E and F, crackle on F and H.
    expect(tags.find((t) => t.tag === 'hum')?.count).toBe(2)
    expect(tags.find((t) => t.tag === 'chirp')?.count).toBe(2)
  })

  it('renames a tag on every take that carries it and writes one history entry per take', async () => {
    const res = await designer.post('/api/tags/rename', { from: 'Data  Burst', to: 'radio burst' })
    expect(res.status).toBe(200)
    const body = TagChangeResponse.parse(res.body)
    expect(body).toMatchObject({ into: 'radio burst', takes: 1 })
    expect(await tagsOf(lib.take.E)).toEqual(['chirp', 'radio burst'])
    expect(await latestEvent(lib.take.E)).toMatchObject({
      kind: 'tagged',
      summary: 'Tag \u201cdata burst\u201d renamed to \u201cradio burst\u201d (tag manager)',
      user: { id: lib.user.designer },
    })
    const c = await counts()
    expect(c['data burst']).toBeUndefined()
    expect(c['radio burst']).toBe(1)
    // The full-text index follows (its triggers are on take_tags).
    const found = (await designer.get('/api/takes?q=radio%20burst').expect(200)).body.items.map(
      (t: { id: number }) => t.id,
    )
    expect(found).toEqual([lib.take.E])
  })

  it('merges two tags into one: a take with both keeps one, and the counts add up', async () => {
    const before = await counts()
    // F carries both chirp and crackle; E chirp; H crackle.
    const res = await designer.post('/api/tags/merge', { tags: ['chirp', 'crackle'], into: 'clicks' })
    expect(res.status).toBe(200)
    expect(TagChangeResponse.parse(res.body)).toMatchObject({ into: 'clicks', takes: 3 })
    expect(await tagsOf(lib.take.F)).toEqual(['clicks'])
    expect(await tagsOf(lib.take.E)).toEqual(['clicks', 'radio burst'])
    expect(await tagsOf(lib.take.H)).toEqual(['clicks'])
    expect((await latestEvent(lib.take.F)).summary).toBe(
      'Tags \u201cchirp\u201d, \u201ccrackle\u201d merged into \u201cclicks\u201d (tag manager)',
    )
    expect((await latestEvent(lib.take.H)).summary).toBe(
      'Tag \u201ccrackle\u201d merged into \u201cclicks\u201d (tag manager)',
    )
    const after = await counts()
    expect(after.clicks).toBe(3)
    expect(before.chirp + before.crackle - 1).toBe(after.clicks)
  })

  it('renaming into a tag already in use merges them', async () => {
    // A: whine + power supply; D: whine. Rename "power supply" to "whine": A keeps one "whine".
    await designer.post('/api/tags/rename', { from: 'power supply', to: 'whine' }).expect(200)
    expect(await tagsOf(lib.take.A)).toEqual(['whine'])
    expect((await counts()).whine).toBe(2)
  })

  it('refuses unknown tags (404, nothing changed), same names and empty bodies (400), and roles that may not edit every take (403)', async () => {
    const before = await counts()
    const unknown = await designer.post('/api/tags/merge', { tags: ['hum', 'no such tag'], into: 'mains' })
    expect(unknown.status).toBe(404)
    expect(unknown.body.error).toMatchObject({ code: 'TAG_NOT_FOUND', details: { tags: ['no such tag'] } })
    expect(await counts()).toEqual(before)
    expect((await designer.post('/api/tags/rename', { from: 'hum', to: ' HUM ' })).status).toBe(400)
    expect((await designer.post('/api/tags/rename', {})).body.error.code).toBe('VALIDATION_FAILED')
    expect((await designer.post('/api/tags/merge', { tags: [], into: 'x' })).status).toBe(400)
    expect((await recordist.post('/api/tags/rename', { from: 'hum', to: 'mains' })).status).toBe(403)
    expect((await producer.post('/api/tags/merge', { tags: ['hum'], into: 'mains' })).status).toBe(403)
    expect(await counts()).toEqual(before)
  })
})

describe('GET /api/takes.csv', () => {
  it('exports every take the query matches, in its sort order, with the key numbers', async () => {
    const res = await designer.get('/api/takes.csv?minLufs=-30&maxLufs=-10&sort=integratedLufs&order=asc').expect(200)
    expect(res.headers['content-type']).toMatch(/^text\/csv/)
    expect(res.headers['content-disposition']).toMatch(
      /attachment; filename="?strayfield-library-\d{4}-\d{2}-\d{2}\.csv"?$/,
    )
    const lines = res.text
      .replace(/^\uFEFF/, '')
      .trimEnd()
      .split('\r\n')
    expect(lines[0]).toBe(
      'id,file,title,capture,device,state,duration (s),format,integrated loudness (LUFS),true peak (dBTP),loudness range (LU),hum (Hz),tags,status',
    )
    const page = (
      await designer.get('/api/takes?minLufs=-30&maxLufs=-10&sort=integratedLufs&order=asc&pageSize=200').expect(200)
    ).body
    expect(lines.length - 1).toBe(page.total)
    expect(lines.slice(1).map((l) => Number(l.split(',')[0]))).toEqual(page.items.map((t: { id: number }) => t.id))
    const a = lines.find((l) => l.startsWith(`${lib.take.A},`))!
    expect(a).toBe(
      `${lib.take.A},A_charger_load.wav,Charger whine under load,Workshop bench sweep,Bench laptop charger,charging,10,48 kHz 24-bit mono,-24,-6,3,,whine,ready`,
    )
  })

  it('keeps text that a spreadsheet would run as a formula as text (OWASP CSV injection), and quotes by RFC 4180', async () => {
    await designer.patch(`/api/takes/${lib.take.B}`, { title: '=HYPERLINK("http://example.test","x")' }).expect(200)
    const res = await designer.get(`/api/takes.csv?q=hyperlink`).expect(200)
    const row = res.text.replace(/^\uFEFF/, '').split('\r\n')[1]
    expect(row).toContain(`,"'=HYPERLINK(""http://example.test"",""x"")",`)
    expect(csvCell(-23.4)).toBe('-23.4')
    expect(csvCell('-23.4')).toBe("'-23.4")
    expect(csvCell('@dana')).toBe("'@dana")
    expect(csvLine(['a,b', 'line\nbreak', null])).toBe('"a,b","line\nbreak",\r\n')
  })

  it('filters by loudness range (minLra/maxLra, LU) like the other ranges', async () => {
    const ids = (
      (await designer.get('/api/takes?minLra=2.5&maxLra=3.5&pageSize=200').expect(200)).body.items as { id: number }[]
    )
      .map((t) => t.id)
      .sort((x, y) => x - y)
    const expected = FIXTURE_TAKES.filter((t) => t.lra !== null && t.lra >= 2.5 && t.lra <= 3.5)
      .map((t) => lib.take[t.key])
      .sort((x, y) => x - y)
    expect(expected.length).toBeGreaterThan(0)
    expect(expected.length).toBeLessThan(FIXTURE_TAKES.length)
    expect(ids).toEqual(expected)
    expect((await designer.get('/api/takes?minLra=wide')).status).toBe(400)
  })

  it('answers 400 for a malformed query', async () => {
    expect((await designer.get('/api/takes.csv?minLufs=loud')).status).toBe(400)
  })
})

describe('mentions', () => {
  it('lists active members with a handle the mention rule reads as their full name, without e-mail addresses', async () => {
    const res = await producer.get('/api/mentions/members').expect(200)
    const members = MentionMembersResponse.parse(res.body).members
    expect(members.find((m) => m.id === lib.user.designer)).toEqual({
      id: lib.user.designer,
      name: 'Dana Humbucker',
      handle: 'Dana.Humbucker',
    })
    expect(JSON.stringify(res.body)).not.toContain('@example.test')
  })

  it('previews who a draft notifies (never its author) and which handles name nobody', async () => {
    const res = await recordist
      .post('/api/mentions/preview', {
        body: '@Dana.Humbucker and @cass, listen at 0:12. Also @nobody-here and @Rory.Coilwright. mail me at x@example.test',
      })
      .expect(200)
    const p = MentionPreviewResponse.parse(res.body)
    expect(p.notified).toEqual([
      { id: lib.user.designer, name: 'Dana Humbucker' },
      { id: lib.user.collaborator, name: 'Cass Earwig' },
    ])
    expect(p.unmatched).toEqual(['nobody-here'])
    expect((await recordist.post('/api/mentions/preview', {})).status).toBe(400)
  })
})
