// Comment threads on takes: numbering, replies, resolving, editing, plain-text
// bodies, and @mentions that arrive as e-mail at a real SMTP server on loopback.
import net from 'node:net'
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest'
import { CommentResponse, CommentsResponse, resolveMentions } from '@shared/schemas/library'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { startTestSmtp } from '../helpers/smtp'
import { insertSession, insertTakeRow, userIds } from './library-fixtures'

let smtp: Awaited<ReturnType<typeof startTestSmtp>>
let server: TestServer
let users: Awaited<ReturnType<typeof userIds>>
let take: number
let otherTake: number
const as: Record<string, Client> = {}
const PUBLIC_URL = 'http://strayfield.localhost' // demo mode runs only on a loopback name (RFC 6761: .localhost)

beforeAll(async () => {
  smtp = await startTestSmtp()
  server = await startTestServer({ smtpUrl: smtp.url, mailCatcher: false, publicUrl: PUBLIC_URL })
  users = await userIds(server.ctx.db)
  const session = await insertSession(server.ctx.db, 'Comment bench')
  take = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Charger whine, long',
    duration: 30,
  })
  otherTake = await insertTakeRow(server.ctx.db, {
    sessionId: session,
    uploaderId: users.recordist,
    title: 'Another take',
    duration: 10,
  })
  for (const role of ['admin', 'recordist', 'designer', 'producer', 'collaborator'])
    as[role] = await signedIn(server.url, role)
})
afterAll(async () => {
  await server.stop()
  await smtp.close()
})

interface ApiComment {
  id: number
  parentId: number | null
  number: number | null
  author: { id: number; name: string } | null
  body: string
  atSeconds: number | null
  regionId: number | null
  resolved: boolean
  resolvedAt: string | null
  resolvedBy: { id: number; name: string } | null
  createdAt: string
  editedAt: string | null
  mentions: { id: number; name: string }[]
}

const comments = async (id = take) =>
  CommentsResponse.parse((await as.collaborator.get(`/api/takes/${id}/comments`).expect(200)).body)
    .comments as ApiComment[]
const post = (role: string, body: object, id = take) => as[role].post(`/api/takes/${id}/comments`, body)

describe('threads', () => {
  let first: ApiComment
  let second: ApiComment

  it('numbers top-level comments 1, 2, 3 in time order; replies carry their parent and no number', async () => {
    const a = await post('designer', { body: 'Whine starts clean here', atSeconds: 12.5 })
    expect(a.status).toBe(201)
    first = CommentResponse.parse(a.body).comment
    expect(first).toMatchObject({
      number: 1,
      parentId: null,
      atSeconds: 12.5,
      regionId: null,
      resolved: false,
      author: { id: users.designer, name: 'Dana Humbucker' },
      editedAt: null,
    })

    const reply = await post('recordist', { body: 'Agreed, the coil was closest then', parentId: first.id })
    expect(reply.status).toBe(201)
    expect(reply.body.comment).toMatchObject({
      number: null,
      parentId: first.id,
      atSeconds: null,
      author: { name: 'Rory Coilwright' },
    })

    const b = await post('producer', { body: 'Too hot for the intro' })
    second = b.body.comment
    expect(second.number).toBe(2)
    const nested = await post('collaborator', { body: 'Reply to the reply', parentId: reply.body.comment.id })
    expect(nested.status).toBe(201)
    const c = await post('collaborator', { body: 'Third thought', atSeconds: 0 })
    expect(c.body.comment.number).toBe(3)

    const list = await comments()
    expect(list.map((x) => [x.body, x.number, x.parentId])).toEqual([
      ['Whine starts clean here', 1, null],
      ['Agreed, the coil was closest then', null, first.id],
      ['Too hot for the intro', 2, null],
      ['Reply to the reply', null, reply.body.comment.id],
      ['Third thought', 3, null],
    ])
    expect(await comments(otherTake)).toEqual([])
  })

  it('lets anyone who may comment resolve and reopen a thread', async () => {
    const res = await as.collaborator.patch(`/api/takes/${take}/comments/${first.id}`, { resolved: true })
    expect(res.status).toBe(200)
    expect(res.body.comment).toMatchObject({
      id: first.id,
      resolved: true,
      resolvedBy: { id: users.collaborator, name: 'Cass Earwig' },
    })
    expect(typeof res.body.comment.resolvedAt).toBe('string')
    const reopened = await as.producer.patch(`/api/takes/${take}/comments/${first.id}`, { resolved: false })
    expect(reopened.body.comment).toMatchObject({ resolved: false, resolvedAt: null, resolvedBy: null })
    await as.producer.patch(`/api/takes/${take}/comments/${first.id}`, { resolved: true }).expect(200)
    expect((await comments()).find((x) => x.id === first.id)).toMatchObject({
      resolved: true,
      resolvedBy: { name: 'Pim Loopington' },
    })
  })

  it('lets only the author change the text, and marks it edited', async () => {
    const mine = await as.producer.patch(`/api/takes/${take}/comments/${second.id}`, {
      body: 'Too hot for the intro; fine for the outro',
    })
    expect(mine.status).toBe(200)
    expect(mine.body.comment.body).toBe('Too hot for the intro; fine for the outro')
    expect(typeof mine.body.comment.editedAt).toBe('string')

    for (const role of ['admin', 'designer', 'recordist', 'collaborator']) {
      const res = await as[role].patch(`/api/takes/${take}/comments/${second.id}`, { body: `${role} was here` })
      expect(res.status, role).toBe(403)
      expect(res.body.error.code).toBe('FORBIDDEN')
      expect(res.body.error.message).toMatch(/only the author/i)
    }
    expect((await comments()).find((x) => x.id === second.id)!.body).toBe('Too hot for the intro; fine for the outro')
  })

  it('writes comments, replies, resolving and reopening into the history', async () => {
    const events = (await as.producer.get(`/api/takes/${take}/history`)).body.events as {
      kind: string
      summary: string
      user: { name: string } | null
    }[]
    const oldestFirst = [...events].reverse()
    expect(oldestFirst.map((e) => e.kind)).toEqual([
      'commented',
      'replied',
      'commented',
      'replied',
      'commented',
      'resolved',
      'reopened',
      'resolved',
    ])
    expect(oldestFirst[0]).toMatchObject({
      summary: 'Note #1 at 0:12.5: \u201cWhine starts clean here\u201d',
      user: { name: 'Dana Humbucker' },
    })
    expect(oldestFirst[1].summary).toBe('Reply to note #1: \u201cAgreed, the coil was closest then\u201d')
    expect(oldestFirst[3].summary).toBe('Reply to note #1: \u201cReply to the reply\u201d')
    expect(oldestFirst[5]).toMatchObject({ summary: 'Resolved note #1', user: { name: 'Cass Earwig' } })
  })
})

describe('what a comment may hold', () => {
  it('stores and returns the body as plain text, byte for byte', async () => {
    const body =
      '  <script>alert("hum")</script> & <b>bold</b> &amp; \u{1F50C}\r\n\tindented line\n\'quotes\' "double" `tick` \\ %s %% ${x}  '
    const res = await post('collaborator', { body })
    expect(res.status).toBe(201)
    expect(res.body.comment.body).toBe(body)
    expect(Buffer.from(res.body.comment.body, 'utf8').equals(Buffer.from(body, 'utf8'))).toBe(true)
    const listed = (await comments()).find((x) => x.id === res.body.comment.id)!
    expect(listed.body).toBe(body)
    const raw = await as.collaborator.get(`/api/takes/${take}/comments`)
    expect(raw.headers['content-type']).toMatch(/^application\/json/)
  })

  it('takes 1 to 4000 characters and refuses whitespace only', async () => {
    for (const body of ['', '   \n\t ', 'x'.repeat(4001)]) {
      const res = await post('producer', { body })
      expect(res.status).toBe(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
    expect((await post('producer', { body: 'x'.repeat(4000) })).status).toBe(201)
    expect((await post('producer', { body: '.' })).status).toBe(201)
  })

  it('keeps times within the take', async () => {
    expect((await post('producer', { body: 'At the very end', atSeconds: 30 })).status).toBe(201)
    const past = await post('producer', { body: 'After the end', atSeconds: 30.5 })
    expect(past.status).toBe(400)
    expect(past.body.error.code).toBe('OUT_OF_RANGE')
    expect((await post('producer', { body: 'Before the start', atSeconds: -0.1 })).status).toBe(400)
  })

  it('ties a comment to a region or a parent of the same take only', async () => {
    const region = await as.designer
      .post(`/api/takes/${otherTake}/regions`, { name: 'Elsewhere', startSeconds: 1, endSeconds: 2 })
      .expect(201)
    const wrongRegion = await post('producer', { body: 'On a region of another take', regionId: region.body.region.id })
    expect(wrongRegion.status).toBe(400)
    expect(wrongRegion.body.error.code).toBe('REGION_NOT_FOUND')
    const onOther = await post('producer', { body: 'Over there', regionId: region.body.region.id }, otherTake)
    expect(onOther.status).toBe(201)
    expect(onOther.body.comment.regionId).toBe(region.body.region.id)

    const wrongParent = await post('producer', { body: 'Reply across takes', parentId: onOther.body.comment.id })
    expect(wrongParent.status).toBe(400)
    expect(wrongParent.body.error.code).toBe('PARENT_NOT_FOUND')
    expect((await post('producer', { body: 'Reply to nothing', parentId: 999999 })).status).toBe(400)
  })

  it('answers 404 for unknown takes and comments', async () => {
    expect((await post('producer', { body: 'Hello' }, 999999)).status).toBe(404)
    expect((await as.producer.get('/api/takes/999999/comments')).status).toBe(404)
    const res = await as.producer.patch(`/api/takes/${take}/comments/999999`, { resolved: true })
    expect(res.status).toBe(404)
    expect(res.body.error.code).toBe('COMMENT_NOT_FOUND')
    const [elsewhere] = await comments(otherTake)
    expect((await as.producer.patch(`/api/takes/${take}/comments/${elsewhere.id}`, { resolved: true })).status).toBe(
      404,
    )
  })
})

describe('@mentions', () => {
  it('mails each mentioned member (not the author) a link to the take at the comment time', async () => {
    const before = smtp.received.length
    const res = await post('designer', {
      body: '@rory can you re-take this? cc @Pim.Loopington, @producer and me (@dana).',
      atSeconds: 12.5,
    })
    expect(res.status).toBe(201)
    expect(res.body.comment.mentions).toEqual([
      { id: users.recordist, name: 'Rory Coilwright' },
      { id: users.producer, name: 'Pim Loopington' },
      { id: users.designer, name: 'Dana Humbucker' },
    ])

    const toRory = await smtp.waitFor('recordist@example.test')
    // Mails go one after the other in mention order; once the last has arrived, every other would have.
    const toPim = await smtp.waitFor('producer@example.test')
    const fresh = smtp.received.slice(before)
    expect(fresh).toHaveLength(2)
    expect(JSON.stringify(fresh.map((m) => m.to))).not.toContain('designer@example.test')

    const link = `${PUBLIC_URL}/takes/${take}?t=12.5`
    for (const mail of [toRory, toPim]) {
      expect(mail.subject).toBe('Dana Humbucker mentioned you on \u201cCharger whine, long\u201d')
      expect(mail.text).toContain(link)
      expect(mail.text).toContain('at 0:12.5')
      expect(mail.text).toContain('> @rory can you re-take this?')
    }
  })

  it("links a reply without a time to its thread's moment, and a region comment to the region's start", async () => {
    const root = await post('producer', { body: 'Listen from here', atSeconds: 7.25 })
    const reply = await post('producer', { body: '@designer what do you think?', parentId: root.body.comment.id })
    expect(reply.status).toBe(201)
    const mail = await smtp.waitFor('designer@example.test')
    expect(mail.text).toContain(`${PUBLIC_URL}/takes/${take}?t=7.25`)
    expect(mail.subject).toBe('Pim Loopington mentioned you on \u201cCharger whine, long\u201d')

    const region = await as.designer
      .post(`/api/takes/${take}/regions`, { name: 'Burst', startSeconds: 21.125, endSeconds: 23 })
      .expect(201)
    await post('producer', { body: 'Thoughts, @ADA?', regionId: region.body.region.id }).expect(201)
    const toAda = await smtp.waitFor('admin@example.test')
    expect(toAda.text).toContain(`${PUBLIC_URL}/takes/${take}?t=21.125`)
    expect(toAda.text).toContain('at 0:21.1')
  })

  it('mails only members newly mentioned by an edit', async () => {
    const mailsTo = (addr: string) => smtp.received.filter((m) => JSON.stringify(m.to).includes(addr)).length
    const roryBefore = mailsTo('recordist@example.test')
    const c = await post('admin', { body: 'Checking with @rory' })
    await expect.poll(() => mailsTo('recordist@example.test')).toBe(roryBefore + 1)

    const edited = await as.admin.patch(`/api/takes/${take}/comments/${c.body.comment.id}`, {
      body: 'Checking with @rory and @cass',
    })
    expect(edited.status).toBe(200)
    expect(edited.body.comment.mentions.map((m: { name: string }) => m.name)).toEqual([
      'Rory Coilwright',
      'Cass Earwig',
    ])
    // Rory comes first in the text: a second mail to Rory would have arrived before Cass's.
    await smtp.waitFor('collaborator@example.test')
    expect(mailsTo('recordist@example.test')).toBe(roryBefore + 1)
  })

  it('mentions nobody through e-mail addresses, unknown names, inactive members or a shared first name', async () => {
    const plain = await post('producer', { body: 'Write to designer@example.test or @nobody-here, or @' })
    expect(plain.body.comment.mentions).toEqual([])

    // Two active members called Sam: "@sam" is ambiguous, full names are not.
    const hash = 'not-a-real-hash'
    const a = await server.ctx.db
      .insertInto('users')
      .values({ email: 'sam.w@example.test', name: 'Sam Wirewound', role: 'producer', password_hash: hash })
      .returning('id')
      .executeTakeFirstOrThrow()
    await server.ctx.db
      .insertInto('users')
      .values({ email: 's.ferrite@example.test', name: 'Sam Ferrite', role: 'producer', password_hash: hash })
      .execute()
    const sam = await post('producer', { body: '@sam? @SamFerrite! @sam.w' })
    expect(sam.body.comment.mentions.map((m: { name: string }) => m.name)).toEqual(['Sam Ferrite', 'Sam Wirewound'])

    await as.admin.patch(`/api/users/${a.id}`, { active: false }).expect(200)
    const inactive = await post('producer', { body: '@SamWirewound and @sam, now unambiguous' })
    expect(inactive.body.comment.mentions.map((m: { name: string }) => m.name)).toEqual(['Sam Ferrite'])
  })

  it('follows the documented rule (shared with the client)', () => {
    const team = [
      { id: 1, name: 'Dana Humbucker', email: 'designer@example.test' },
      { id: 2, name: 'Zoë Ampère', email: 'zoe.a@example.test' },
      { id: 3, name: 'Rory Coilwright', email: 'recordist@example.test' },
    ]
    const who = (body: string) => resolveMentions(body, team).map((m) => m.id)
    expect(who('@dana')).toEqual([1])
    expect(who('@DANA.HUMBUCKER')).toEqual([1])
    expect(who('@dana_humbucker and @designer')).toEqual([1])
    expect(who('@zoe and @ZoeAmpere and @zoe.a')).toEqual([2])
    expect(who('(@rory), "@dana".')).toEqual([3, 1])
    expect(who('x@dana y@rory')).toEqual([])
    expect(who('@@dana')).toEqual([])
    expect(who('@danah')).toEqual([])
    expect(who('@rory.')).toEqual([3])
  })
})

describe('a mail server that does not answer', () => {
  let down: TestServer
  beforeAll(async () => {
    const port = await new Promise<number>((resolve) => {
      const probe = net.createServer().listen(0, '127.0.0.1', () => {
        const p = (probe.address() as net.AddressInfo).port
        probe.close(() => resolve(p))
      })
    })
    down = await startTestServer({ smtpUrl: `smtp://127.0.0.1:${port}`, mailCatcher: false, publicUrl: PUBLIC_URL })
  })
  afterAll(async () => {
    await down.stop()
  })

  it('keeps the comment and logs the failed delivery', async () => {
    const errors = vi.spyOn(console, 'error').mockImplementation(() => undefined)
    try {
      const u = await userIds(down.ctx.db)
      const session = await insertSession(down.ctx.db, 'No mail bench')
      const id = await insertTakeRow(down.ctx.db, {
        sessionId: session,
        uploaderId: u.recordist,
        title: 'Quiet take',
        duration: 5,
      })
      const designer = await signedIn(down.url, 'designer')
      const res = await designer.post(`/api/takes/${id}/comments`, { body: '@rory this one', atSeconds: 1 })
      expect(res.status).toBe(201)
      expect(res.body.comment.mentions).toEqual([{ id: u.recordist, name: 'Rory Coilwright' }])
      await expect
        .poll(() => errors.mock.calls.some((c) => String(c[0]).includes('was not delivered')), { timeout: 20_000 })
        .toBe(true)
      const list = (await designer.get(`/api/takes/${id}/comments`)).body.comments
      expect(list.map((c: { body: string }) => c.body)).toEqual(['@rory this one'])
    } finally {
      errors.mockRestore()
    }
  })
})
