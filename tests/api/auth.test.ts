import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Client, startTestServer, type TestServer } from '../helpers/server'

let server: TestServer

beforeAll(async () => {
  server = await startTestServer()
})
afterAll(async () => {
  await server.stop()
})

describe('sign-in', () => {
  it('answers health without signing in', async () => {
    const c = new Client(server.url)
    const res = await c.get('/api/health').expect(200)
    expect(res.body).toEqual({ ok: true })
  })

  it('me is 401 before, 200 after login, 401 after logout', async () => {
    const c = new Client(server.url)
    const before = await c.get('/api/auth/me')
    expect(before.status).toBe(401)
    expect(before.body.error.code).toBe('UNAUTHENTICATED')

    const login = await c.login('designer@example.test')
    expect(login.status).toBe(200)
    expect(login.body.user).toMatchObject({ email: 'designer@example.test', role: 'designer' })
    expect(Object.keys(login.body.user).sort()).toEqual(['email', 'id', 'name', 'role'])

    const me = await c.get('/api/auth/me').expect(200)
    expect(me.body.user.email).toBe('designer@example.test')

    await c.post('/api/auth/logout').expect(200)
    const after = await c.get('/api/auth/me')
    expect(after.status).toBe(401)
  })

  it('refuses a wrong password with generic wording', async () => {
    const c = new Client(server.url)
    await c.refreshCsrf()
    const bad = await c.post('/api/auth/login', { email: 'producer@example.test', password: 'wrong-password-here' })
    expect(bad.status).toBe(401)
    expect(bad.body.error.code).toBe('INVALID_CREDENTIALS')
    const unknown = await c.post('/api/auth/login', { email: 'nobody@example.test', password: 'wrong-password-here' })
    expect(unknown.status).toBe(401)
    // No hint whether the address exists: the same answer for both.
    expect(unknown.body.error.message).toBe(bad.body.error.message)
  })

  it('regenerates the session id on login', async () => {
    const c = new Client(server.url)
    await c.refreshCsrf()
    const cookieBefore = (await c.get('/api/auth/csrf')).headers['set-cookie']?.toString() ?? ''
    const res = await c.post('/api/auth/login', { email: 'admin@example.test', password: 'strayfield-demo' })
    const sidBefore = cookieBefore.match(/sf\.sid=([^;]+)/)?.[1]
    const sidAfter = res.headers['set-cookie']?.toString().match(/sf\.sid=([^;]+)/)?.[1]
    expect(sidAfter).toBeTruthy()
    expect(sidAfter).not.toBe(sidBefore)
  })

  it('rejects a state-changing request without the CSRF token', async () => {
    const c = new Client(server.url)
    const res = await c.agent.post('/api/auth/login').send({ email: 'admin@example.test', password: 'strayfield-demo' })
    expect(res.status).toBe(403)
    expect(res.body.error.code).toBe('CSRF_INVALID')
    const forged = await c.agent
      .post('/api/auth/login')
      .set('x-csrf-token', 'forged-token')
      .send({ email: 'admin@example.test', password: 'strayfield-demo' })
    expect(forged.status).toBe(403)
  })

  it('sends helmet security headers', async () => {
    const res = await new Client(server.url).get('/api/health')
    expect(res.headers['x-content-type-options']).toBe('nosniff')
    expect(res.headers['content-security-policy']).toContain("default-src 'self'")
  })

  it('validates the body with a readable error', async () => {
    const c = new Client(server.url)
    await c.refreshCsrf()
    const res = await c.post('/api/auth/login', { email: 'not-an-address', password: 'x' })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('VALIDATION_FAILED')
    expect(res.body.error.message).toMatch(/e-mail/)
  })
})

describe('rate limit', () => {
  it('delays sign-ins on an account after its free failures, and lets successful ones through', async () => {
    const limited = await startTestServer({ loginFailuresAllowed: 4, loginDelayBaseMs: 400 })
    const c = new Client(limited.url)
    await c.refreshCsrf()
    // Successful sign-ins do not count towards the limit (4 free failures in this server).
    for (let i = 0; i < 5; i++) {
      expect(
        (await c.post('/api/auth/login', { email: 'collaborator@example.test', password: 'strayfield-demo' })).status,
      ).toBe(200)
      await c.refreshCsrf()
    }
    const statuses: number[] = []
    for (let i = 0; i < 6; i++) {
      statuses.push(
        (await c.post('/api/auth/login', { email: 'recordist@example.test', password: 'not-the-password' })).status,
      )
    }
    expect(statuses.slice(0, 4)).toEqual([401, 401, 401, 401])
    expect(statuses[4]).toBe(429)
    const last = await c.post('/api/auth/login', { email: 'recordist@example.test', password: 'strayfield-demo' })
    expect(last.status).toBe(429)
    expect(last.body.error.code).toBe('TOO_MANY_ATTEMPTS')
    // A delay, not a lock: once it has passed the owner signs in.
    await new Promise((r) => setTimeout(r, 450))
    expect(
      (await c.post('/api/auth/login', { email: 'recordist@example.test', password: 'strayfield-demo' })).status,
    ).toBe(200)
    await limited.stop()
  })
})

describe('restart', () => {
  it('keeps a session across a server restart', async () => {
    const first = await startTestServer()
    const c = new Client(first.url)
    await c.login('producer@example.test')
    const cookie = (await c.get('/api/auth/me').expect(200)).request.cookies
    const { dbFile, storageDir } = first.ctx.config
    await first.stop()

    const second = await startTestServer({ dbFile, storageDir })
    try {
      const again = new Client(second.url)
      const res = await again.agent.get('/api/auth/me').set('Cookie', cookie)
      expect(res.status).toBe(200)
      expect(res.body.user.email).toBe('producer@example.test')
    } finally {
      await second.stop()
    }
  })
})
