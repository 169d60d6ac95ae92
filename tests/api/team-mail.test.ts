import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Client, signedIn, startTestServer, type TestServer } from '../helpers/server'
import { linkToken, startTestSmtp } from '../helpers/smtp'

let smtp: Awaited<ReturnType<typeof startTestSmtp>>
let server: TestServer
let admin: Client

beforeAll(async () => {
  smtp = await startTestSmtp()
  server = await startTestServer({ smtpUrl: smtp.url, mailCatcher: false })
  admin = await signedIn(server.url, 'admin')
})
afterAll(async () => {
  await server.stop()
  await smtp.close()
})

describe('invitations over real SMTP', () => {
  it('delivers the invitation, the link works once, then is refused', async () => {
    const res = await admin.post('/api/invitations', { email: 'new.listener@example.test', role: 'collaborator' })
    expect(res.status).toBe(201)
    expect(res.body.invitation).toMatchObject({
      email: 'new.listener@example.test',
      role: 'collaborator',
      acceptedAt: null,
    })

    const mail = await smtp.waitFor('new.listener@example.test')
    expect(mail.subject).toMatch(/invited/i)
    const token = linkToken(mail.text ?? '', 'join')

    const invitee = new Client(server.url)
    await invitee.refreshCsrf()
    const accepted = await invitee.post(`/api/invitations/${token}/accept`, {
      name: 'Nova Listener',
      password: 'a-long-enough-password',
    })
    expect(accepted.status).toBe(201)
    expect(accepted.body.user).toMatchObject({
      email: 'new.listener@example.test',
      role: 'collaborator',
      name: 'Nova Listener',
    })
    // Signed in at once.
    expect((await invitee.get('/api/auth/me')).body.user.email).toBe('new.listener@example.test')
    // Joining is the first sign-in: the team table shows it, not "never".
    const joined = (await admin.get('/api/users')).body.users.find(
      (u: { email: string }) => u.email === 'new.listener@example.test',
    )
    expect(Date.parse(joined.lastLoginAt)).toBeGreaterThan(Date.now() - 60_000)

    const again = new Client(server.url)
    await again.refreshCsrf()
    const reuse = await again.post(`/api/invitations/${token}/accept`, {
      name: 'Someone Else',
      password: 'another-long-password',
    })
    expect(reuse.status).toBe(410)
    expect(reuse.body.error.code).toBe('TOKEN_INVALID')
  })

  it('refuses a password shorter than 10 characters', async () => {
    await admin.post('/api/invitations', { email: 'short.pw@example.test', role: 'producer' }).expect(201)
    const token = linkToken((await smtp.waitFor('short.pw@example.test')).text ?? '', 'join')
    const c = new Client(server.url)
    await c.refreshCsrf()
    const res = await c.post(`/api/invitations/${token}/accept`, { name: 'Shorty', password: 'nine-char' })
    expect(res.status).toBe(400)
    expect(res.body.error.message).toMatch(/at least 10/)
  })

  it('resending gives a new link and retires the old one', async () => {
    const created = await admin
      .post('/api/invitations', { email: 'resend.me@example.test', role: 'designer' })
      .expect(201)
    const first = linkToken((await smtp.waitFor('resend.me@example.test')).text ?? '', 'join')
    const before = smtp.received.length
    await admin.post(`/api/invitations/${created.body.invitation.id}/resend`).expect(200)
    await expect.poll(() => smtp.received.length).toBeGreaterThan(before)
    const second = linkToken(smtp.received[smtp.received.length - 1].text ?? '', 'join')
    expect(second).not.toBe(first)
    const c = new Client(server.url)
    await c.refreshCsrf()
    expect(
      (await c.post(`/api/invitations/${first}/accept`, { name: 'Old Link', password: 'long-enough-pass' })).status,
    ).toBe(410)
    expect(
      (await c.post(`/api/invitations/${second}/accept`, { name: 'New Link', password: 'long-enough-pass' })).status,
    ).toBe(201)
  })
})

describe('password reset over real SMTP', () => {
  it('answers 202 for any address, mails only real ones, and the link works once', async () => {
    const anon = new Client(server.url)
    await anon.refreshCsrf()
    const before = smtp.received.length
    expect((await anon.post('/api/auth/password-reset', { email: 'nobody.here@example.test' })).status).toBe(202)
    expect((await anon.post('/api/auth/password-reset', { email: 'producer@example.test' })).status).toBe(202)
    const mail = await smtp.waitFor('producer@example.test')
    expect(smtp.received.length).toBe(before + 1)
    const token = linkToken(mail.text ?? '', 'reset')

    expect((await anon.post(`/api/auth/password-reset/${token}`, { password: 'brand-new-password-1' })).status).toBe(
      200,
    )
    expect((await anon.post(`/api/auth/password-reset/${token}`, { password: 'brand-new-password-2' })).status).toBe(
      410,
    )

    const c = new Client(server.url)
    expect((await c.login('producer@example.test', 'strayfield-demo')).status).toBe(401)
    expect((await c.login('producer@example.test', 'brand-new-password-1')).status).toBe(200)
  })
})

describe('team', () => {
  it('signs a deactivated user out on their next request', async () => {
    const victim = await signedIn(server.url, 'recordist')
    expect((await victim.get('/api/auth/me')).status).toBe(200)
    const users = (await admin.get('/api/users').expect(200)).body.users
    const rec = users.find((u: { email: string }) => u.email === 'recordist@example.test')
    const res = await admin.patch(`/api/users/${rec.id}`, { active: false })
    expect(res.status).toBe(200)
    expect(res.body.user.active).toBe(false)
    expect((await victim.get('/api/auth/me')).status).toBe(401)
    expect((await new Client(server.url).login('recordist@example.test')).status).toBe(401)
    await admin.patch(`/api/users/${rec.id}`, { active: true }).expect(200)
  })

  it('changes a role and keeps at least one admin', async () => {
    const users = (await admin.get('/api/users')).body.users
    const collab = users.find((u: { email: string }) => u.email === 'collaborator@example.test')
    expect((await admin.patch(`/api/users/${collab.id}`, { role: 'producer' })).body.user.role).toBe('producer')
    const me = users.find((u: { email: string }) => u.email === 'admin@example.test')
    const res = await admin.patch(`/api/users/${me.id}`, { role: 'designer' })
    expect(res.status).toBe(409)
    expect(res.body.error.code).toBe('LAST_ADMIN')
  })
})

describe('built-in mail catcher', () => {
  it('catches mail over SMTP on loopback and shows it in the outbox', async () => {
    const s = await startTestServer()
    try {
      const a = await signedIn(s.url, 'admin')
      await a.post('/api/invitations', { email: 'caught@example.test', role: 'producer' }).expect(201)
      const outbox = await a.get('/api/outbox').expect(200)
      expect(outbox.body.transport).toMatch(/127\.0\.0\.1:\d+/)
      expect(outbox.body.messages[0]).toMatchObject({ to: 'caught@example.test' })
      expect(outbox.body.messages[0].text).toMatch(/\/join\/[A-Za-z0-9_-]{20,}/)
    } finally {
      await s.stop()
    }
  })
})
