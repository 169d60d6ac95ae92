// Listening notes: a comment pinned to a time and optionally a frequency band,
// carrying a trade outcome; the outcome filters the library; older comments
// come through the migration as notes at a time with no band and no outcome.
import fs from 'node:fs'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Migrator, sql } from 'kysely'
import { CommentResponse, CommentsResponse, type Comment } from '@shared/schemas/library'
import { TakePage } from '@shared/schemas/takes'
import { migrations } from '../../db/migrations'
import { openDatabase } from '../../server/core/database'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { insertSession, insertTakeRow, userIds } from './library-fixtures'

let server: TestServer
let keepTake: number
let rejectTake: number
let quietTake: number
const as: Record<string, Client> = {}

beforeAll(async () => {
  server = await startTestServer()
  const users = await userIds(server.ctx.db)
  const session = await insertSession(server.ctx.db, 'Notes bench')
  keepTake = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Router whine, lid closed',
    duration: 20,
  })
  rejectTake = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Router whine, handling noise',
    duration: 20,
  })
  quietTake = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Router whine, unheard',
    duration: 20,
  })
  for (const role of ['designer', 'collaborator', 'producer']) as[role] = await signedIn(server.url, role)
})
afterAll(() => server.stop())

const notes = async (take: number): Promise<Comment[]> =>
  CommentsResponse.parse((await as.designer.get(`/api/takes/${take}/comments`).expect(200)).body).comments
const post = (role: string, take: number, body: object) => as[role].post(`/api/takes/${take}/comments`, body)
const titlesWith = async (outcome: string) =>
  TakePage.parse((await as.producer.get(`/api/takes?noteOutcome=${outcome}`).expect(200)).body).items.map(
    (t) => t.title,
  )

describe('a note pinned to a time and a band, with an outcome', () => {
  let note: Comment

  it('keeps lowHz, highHz and outcome beside body and atSeconds', async () => {
    const res = await post('designer', keepTake, {
      body: 'The 9 kHz whine starts here',
      atSeconds: 4.2,
      lowHz: 8800,
      highHz: 9300,
      outcome: 'keep',
    })
    expect(res.status).toBe(201)
    note = CommentResponse.parse(res.body).comment
    expect(note).toMatchObject({
      body: 'The 9 kHz whine starts here',
      atSeconds: 4.2,
      lowHz: 8800,
      highHz: 9300,
      outcome: 'keep',
      parentId: null,
    })
    expect((await notes(keepTake)).find((c) => c.id === note.id)).toMatchObject({
      lowHz: 8800,
      highHz: 9300,
      outcome: 'keep',
    })
  })

  it('a note at a time alone has no band and no outcome', async () => {
    const res = await post('collaborator', keepTake, { body: 'Click at the start', atSeconds: 0.5 })
    expect(res.status).toBe(201)
    expect(res.body.comment).toMatchObject({ atSeconds: 0.5, lowHz: null, highHz: null, outcome: null })
  })

  it('replies stay, without band or outcome', async () => {
    const ok = await post('collaborator', keepTake, { body: 'Agreed, keep it', parentId: note.id })
    expect(ok.status).toBe(201)
    expect(ok.body.comment).toMatchObject({ parentId: note.id, outcome: null, lowHz: null })
    const withOutcome = await post('collaborator', keepTake, { body: 'Reject', parentId: note.id, outcome: 'reject' })
    expect(withOutcome.status).toBe(400)
    expect(withOutcome.body.error.code).toBe('VALIDATION_FAILED')
    const patchReply = await as.collaborator.patch(`/api/takes/${keepTake}/comments/${ok.body.comment.id}`, {
      outcome: 'trim',
    })
    expect(patchReply.status).toBe(400)
    expect(patchReply.body.error.code).toBe('NOT_A_NOTE')
  })

  it('refuses half a band, an upside-down band, a band above Nyquist and an unknown outcome, saving nothing', async () => {
    const before = (await notes(keepTake)).length
    const cases: [object, RegExp][] = [
      [{ body: 'x', atSeconds: 1, lowHz: 100 }, /lowHz and highHz together/],
      [{ body: 'x', atSeconds: 1, lowHz: 900, highHz: 100 }, /low below high/],
      [{ body: 'x', atSeconds: 1, lowHz: -5, highHz: 100 }, /0 Hz/],
      // insertTakeRow makes 48 kHz takes: Nyquist is 24 kHz (sampling theorem).
      [{ body: 'x', atSeconds: 1, lowHz: 20000, highHz: 30000 }, /24000 Hz/],
      [{ body: 'x', atSeconds: 1, outcome: 'resolved' }, /keep, trim, re-take, reject/],
    ]
    for (const [body, message] of cases) {
      const res = await post('designer', keepTake, body)
      expect(res.status, JSON.stringify(body)).toBe(400)
      expect(res.body.error.message).toMatch(message)
    }
    expect((await notes(keepTake)).length).toBe(before)
  })

  it('changes and clears the outcome, and writes it into the history', async () => {
    const trim = await as.collaborator.patch(`/api/takes/${keepTake}/comments/${note.id}`, { outcome: 'trim' })
    expect(trim.status).toBe(200)
    expect(trim.body.comment.outcome).toBe('trim')
    const cleared = await as.collaborator.patch(`/api/takes/${keepTake}/comments/${note.id}`, { outcome: null })
    expect(cleared.body.comment.outcome).toBeNull()
    await as.designer.patch(`/api/takes/${keepTake}/comments/${note.id}`, { outcome: 'keep' }).expect(200)
    const events = (await as.designer.get(`/api/takes/${keepTake}/history`)).body.events as {
      kind: string
      summary: string
    }[]
    const summaries = events
      .filter((e) => e.kind === 'outcome')
      .map((e) => e.summary)
      .reverse()
    expect(summaries).toEqual([
      'Marked note #1 \u201ctrim\u201d',
      'Cleared the outcome of note #1',
      'Marked note #1 \u201ckeep\u201d',
    ])
    const created = events.find((e) => e.kind === 'commented' && e.summary.startsWith('Note #1'))
    expect(created?.summary).toBe('Note #1 at 0:04.2, 8.8\u20139.3 kHz (keep): \u201cThe 9 kHz whine starts here\u201d')
  })
})

describe('the outcome as a library filter', () => {
  it('lists the takes with a note of that outcome, and only those', async () => {
    await post('designer', rejectTake, { body: 'Handling noise all through', atSeconds: 2, outcome: 'reject' }).expect(
      201,
    )
    await post('designer', quietTake, { body: 'Nothing to hear', atSeconds: 2 }).expect(201)
    // A reply saying "keep" in words does not make the take a kept one.
    expect(await titlesWith('keep')).toEqual(['Router whine, lid closed'])
    expect(await titlesWith('reject')).toEqual(['Router whine, handling noise'])
    expect(await titlesWith('re-take')).toEqual([])
  })

  it('refuses an outcome that does not exist', async () => {
    const res = await as.producer.get('/api/takes?noteOutcome=resolved')
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
  })
})

describe('older comments after the migration', () => {
  it('become notes at their time, with no band and no outcome', async () => {
    const file = `${fs.mkdtempSync('/tmp/sf-notes-')}/m.sqlite`
    const db = openDatabase(file)
    const migrator = new Migrator({ db, provider: { getMigrations: async () => migrations } })
    expect((await migrator.migrateTo('20261201160000_packs')).error).toBeUndefined()
    await sql`INSERT INTO capture_sessions (title, date) VALUES ('Old', '2026-11-01')`.execute(db)
    await sql`INSERT INTO takes (session_id, filename, title, audio_path, size_bytes, sha256, status) VALUES (1, 'a.wav', 'Old take', 'audio/a.wav', 1, 'ab', 'ready')`.execute(
      db,
    )
    await sql`INSERT INTO comments (take_id, body, at_seconds, resolved_at) VALUES (1, 'Old remark', 3.5, '2026-11-02T00:00:00.000Z')`.execute(
      db,
    )
    expect((await migrator.migrateToLatest()).error).toBeUndefined()
    const row = await db.selectFrom('comments').selectAll().executeTakeFirstOrThrow()
    expect(row).toMatchObject({ body: 'Old remark', at_seconds: 3.5, low_hz: null, high_hz: null, outcome: null })
    await db.destroy()
  })
})
