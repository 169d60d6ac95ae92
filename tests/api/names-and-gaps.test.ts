// Names and mentions, and the smaller gaps of issue 9: control characters
// refused in display and device names, uploaded file names kept short and on
// one line, one mention mail per comment and person, an item's region from its
// own take, invitations withdrawn by admins, and never zero admins.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Client, signedIn, startTestServer, type TestServer } from '../helpers/server'
import { linkToken, startTestSmtp } from '../helpers/smtp'
import { createSession, soxWav, uploadTake } from '../helpers/uploads'
import { insertSession, insertTakeRow, userIds } from './library-fixtures'

let smtp: Awaited<ReturnType<typeof startTestSmtp>>
let server: TestServer
let admin: Client
let designer: Client
let recordist: Client

beforeAll(async () => {
  smtp = await startTestSmtp()
  server = await startTestServer({ smtpUrl: smtp.url, mailCatcher: false })
  admin = await signedIn(server.url, 'admin')
  designer = await signedIn(server.url, 'designer')
  recordist = await signedIn(server.url, 'recordist')
}, 60_000)
afterAll(async () => {
  await server?.stop()
  await smtp?.close()
})

describe('names', () => {
  it('refuses a display name with a line break or another control character when an invitation is accepted', async () => {
    await admin.post('/api/invitations', { email: 'lf.name@example.test', role: 'collaborator' }).expect(201)
    const token = linkToken((await smtp.waitFor('lf.name@example.test')).text ?? '', 'join')
    const invitee = new Client(server.url)
    await invitee.refreshCsrf()
    for (const name of ['Eve\nAdmin', 'Eve\rAdmin', 'Eve\u0007Coil', 'Eve\u0085Coil']) {
      const res = await invitee.post(`/api/invitations/${token}/accept`, { name, password: 'a-long-enough-password' })
      expect(res.status).toBe(400)
      expect(res.body.error.message).toMatch(/control characters/)
    }
    expect(
      (await invitee.post(`/api/invitations/${token}/accept`, { name: 'Eve Coil', password: 'a-long-enough-password' }))
        .status,
    ).toBe(201)
  })

  it('refuses a device name with a control character', async () => {
    const bad = await designer.post('/api/sources', { name: 'Bench supply\r\nInjected', kind: 'power-supply' })
    expect(bad.status).toBe(400)
    expect((await designer.post('/api/sources', { name: 'Bench supply', kind: 'power-supply' })).status).toBe(201)
  })

  it('keeps an uploaded file name to 255 characters on one line', async () => {
    const session = await createSession(recordist)
    const wav = soxWav(path.join(server.dir, 'name.wav'), { seconds: 0.2, rate: 8000, bits: 16 })
    const long = `${'a'.repeat(2500)}\nsecond line${'b'.repeat(2500)}.wav`
    const res = await uploadTake(recordist, session.id, wav, long)
    expect(res.status).toBe(201)
    const filename: string = res.body.take.filename
    expect([...filename].length).toBeLessThanOrEqual(255)
    expect(filename).not.toMatch(/\p{Cc}/u)
    expect(filename.endsWith('.wav')).toBe(true)
  })
})

describe('mention mails', () => {
  it('go once per comment and person, even when an edit removes the mention and adds it again', async () => {
    const users = await userIds(server.ctx.db)
    const take = await insertTakeRow(server.ctx.db, {
      sessionId: await insertSession(server.ctx.db, 'Mentions'),
      uploaderId: users.recordist,
      title: 'Mention take',
    })
    const toRory = () => smtp.received.filter((m) => JSON.stringify(m.to).includes('recordist@example.test')).length
    const before = toRory()
    const c = await designer.post(`/api/takes/${take}/comments`, { body: 'Listen @rory' })
    expect(c.status).toBe(201)
    await expect.poll(toRory).toBe(before + 1)
    const url = `/api/takes/${take}/comments/${c.body.comment.id}`
    await designer.patch(url, { body: 'Listen, everyone' }).expect(200)
    await designer.patch(url, { body: 'Listen again @rory and @cass' }).expect(200)
    await smtp.waitFor('collaborator@example.test') // Cass's mail went out after any second one to Rory would have
    expect(toRory()).toBe(before + 1)
  })
})

describe('smaller gaps', () => {
  it('refuses a pack item whose region belongs to another take, even with the range given', async () => {
    const users = await userIds(server.ctx.db)
    const session = await insertSession(server.ctx.db, 'Regions')
    const [a, b] = [
      await insertTakeRow(server.ctx.db, { sessionId: session, uploaderId: users.recordist, title: 'A' }),
      await insertTakeRow(server.ctx.db, { sessionId: session, uploaderId: users.recordist, title: 'B' }),
    ]
    const region = await designer.post(`/api/takes/${b}/regions`, {
      name: 'other take',
      startSeconds: 1,
      endSeconds: 2,
    })
    expect(region.status).toBe(201)
    const pack = await designer.post('/api/packs', { name: 'Region check' }).expect(201)
    const res = await designer.post(`/api/packs/${pack.body.pack.id}/items`, {
      takeId: a,
      regionId: region.body.region.id,
      startSeconds: 0,
      endSeconds: 1,
    })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('REGION_NOT_FOUND')
  })

  it('lets an admin withdraw an invitation (DELETE /api/invitations/:id): its link stops working', async () => {
    const inv = await admin.post('/api/invitations', { email: 'withdrawn@example.test', role: 'producer' }).expect(201)
    const token = linkToken((await smtp.waitFor('withdrawn@example.test')).text ?? '', 'join')
    expect((await designer.delete(`/api/invitations/${inv.body.invitation.id}`)).status).toBe(403)
    expect((await admin.delete(`/api/invitations/${inv.body.invitation.id}`)).status).toBe(204)
    expect((await admin.get('/api/invitations')).body.invitations.map((i: { id: number }) => i.id)).not.toContain(
      inv.body.invitation.id,
    )
    const invitee = new Client(server.url)
    await invitee.refreshCsrf()
    expect(
      (await invitee.post(`/api/invitations/${token}/accept`, { name: 'Too Late', password: 'a-long-enough-password' }))
        .status,
    ).toBe(410)
    expect((await admin.delete('/api/invitations/999999')).status).toBe(404)
  })

  it('never leaves the team without an admin when two admins demote each other at once', async () => {
    const s = await startTestServer()
    try {
      const first = await signedIn(s.url, 'admin')
      const ids = await userIds(s.ctx.db)
      for (let round = 0; round < 5; round++) {
        // Two admins (the designer promoted), each demoting the other at the same moment.
        await s.ctx.db
          .updateTable('users')
          .set({ role: 'admin' })
          .where('id', 'in', [ids.admin, ids.designer])
          .execute()
        const second = await signedIn(s.url, 'designer')
        const [a, b] = await Promise.all([
          first.patch(`/api/users/${ids.designer}`, { role: 'designer' }),
          second.patch(`/api/users/${ids.admin}`, { role: 'designer' }),
        ])
        // One wins; the other is refused: 409 LAST_ADMIN, or 403 when its sender was already demoted.
        expect([a.status, b.status].filter((x) => x === 200)).toHaveLength(1)
        const admins = await s.ctx.db
          .selectFrom('users')
          .select('id')
          .where('role', '=', 'admin')
          .where('active', '=', 1)
          .execute()
        expect(admins).toHaveLength(1)
        if (admins[0].id !== ids.admin)
          await s.ctx.db.updateTable('users').set({ role: 'admin' }).where('id', '=', ids.admin).execute()
      }
    } finally {
      await s.stop()
    }
  })
})
