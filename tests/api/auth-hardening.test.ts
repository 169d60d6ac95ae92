// Nothing leaks through sign-in: limits that delay rather than lock out, password
// resets that answer at once and leave one live link, no session rows for
// anonymous visitors, an absolute session lifetime, demo mode only on loopback,
// and the security headers for plain http and for https.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { OutgoingMail } from '../../server/mail/mailer'
import { startServer } from '../../server/server'
import { Client, DEMO_PASSWORD, signedIn, startTestServer, type TestServer } from '../helpers/server'

const pause = (ms: number) => new Promise((r) => setTimeout(r, ms))
const countSessions = async (s: TestServer) =>
  Number(
    (
      await s.ctx.db
        .selectFrom('sessions')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )

let server: TestServer
beforeAll(async () => {
  server = await startTestServer({ loginFailuresAllowed: 2, loginDelayBaseMs: 300, loginDelayMaxMs: 1200 })
})
afterAll(async () => {
  await server?.stop()
})

describe('sign-in limits delay, they never lock the owner out', () => {
  it('grows the delay with each failure past the free ones, and the right password works once it has passed', async () => {
    const c = new Client(server.url)
    await c.refreshCsrf()
    const wrong = () => c.post('/api/auth/login', { email: 'recordist@example.test', password: 'not-the-password' })
    expect((await wrong()).status).toBe(401)
    expect((await wrong()).status).toBe(401)
    const held = await wrong()
    expect(held.status).toBe(429)
    expect(held.body.error.code).toBe('TOO_MANY_ATTEMPTS')
    expect(Number(held.headers['retry-after'])).toBeGreaterThanOrEqual(1)
    await pause(350) // past the first delay (300 ms)
    expect((await wrong()).status).toBe(401)
    // The delay doubled (600 ms): the owner's right password waits it out, then signs in.
    expect((await c.post('/api/auth/login', { email: 'recordist@example.test', password: DEMO_PASSWORD })).status).toBe(
      429,
    )
    await pause(650)
    expect((await c.post('/api/auth/login', { email: 'recordist@example.test', password: DEMO_PASSWORD })).status).toBe(
      200,
    )
  })

  it('lets 20 simultaneous correct sign-ins from one address all through (requests in flight are not failures)', async () => {
    const clients = await Promise.all(
      Array.from({ length: 20 }, async () => {
        const c = new Client(server.url)
        await c.refreshCsrf()
        return c
      }),
    )
    const answers = await Promise.all(
      clients.map((c) => c.post('/api/auth/login', { email: 'producer@example.test', password: DEMO_PASSWORD })),
    )
    expect(answers.map((a) => a.status)).toEqual(Array(20).fill(200))
    await clients[0].refreshCsrf()
    expect(
      (await clients[0].post('/api/auth/login', { email: 'producer@example.test', password: DEMO_PASSWORD })).status,
    ).toBe(200)
  }, 60_000)

  it('meets a burst of wrong passwords sent at once with the delays too', async () => {
    const clients = await Promise.all(
      Array.from({ length: 6 }, async () => {
        const c = new Client(server.url)
        await c.refreshCsrf()
        return c
      }),
    )
    const answers = await Promise.all(
      clients.map((c) => c.post('/api/auth/login', { email: 'designer@example.test', password: 'guess-guess-guess' })),
    )
    const statuses = answers.map((a) => a.status)
    expect(statuses.filter((s) => s === 401)).toHaveLength(2)
    expect(statuses.filter((s) => s === 429)).toHaveLength(4)
  })
})

describe('sessions', () => {
  it('stores no session row for anonymous visitors fetching CSRF tokens, and they can still sign in', async () => {
    const before = await countSessions(server)
    for (let i = 0; i < 30; i++) await new Client(server.url).refreshCsrf()
    expect(await countSessions(server)).toBe(before)
    const c = new Client(server.url)
    expect((await c.login('collaborator@example.test')).status).toBe(200)
    expect(await countSessions(server)).toBe(before + 1)
    const row = await server.ctx.db
      .selectFrom('sessions')
      .select(['user_id'])
      .orderBy('created_at', 'desc')
      .executeTakeFirstOrThrow()
    expect(row.user_id).toEqual(expect.any(Number))
  })

  it('ends a session 30 days after sign-in however active it stays', async () => {
    const c = await signedIn(server.url, 'admin')
    await c.get('/api/auth/me').expect(200)
    const admin = await server.ctx.db
      .selectFrom('users')
      .select('id')
      .where('email', '=', 'admin@example.test')
      .executeTakeFirstOrThrow()
    await server.ctx.db
      .updateTable('sessions')
      .set({ created_at: Date.now() - 31 * 24 * 3600 * 1000 })
      .where('user_id', '=', admin.id)
      .execute()
    expect((await c.get('/api/auth/me')).status).toBe(401)
  })
})

describe('password reset', () => {
  it('answers 202 before any mail goes out, the same for unknown addresses', async () => {
    let release!: () => void
    const gate = new Promise<void>((r) => (release = r))
    const sent: OutgoingMail[] = []
    const send = server.ctx.mailer.send
    server.ctx.mailer.send = async (m) => {
      await gate
      sent.push(m)
    }
    try {
      const c = new Client(server.url)
      await c.refreshCsrf()
      const known = await c.post('/api/auth/password-reset', { email: 'designer@example.test' })
      const unknown = await c.post('/api/auth/password-reset', { email: 'nobody-here@example.test' })
      expect([known.status, unknown.status]).toEqual([202, 202])
      expect(known.body).toEqual(unknown.body)
      expect(sent).toHaveLength(0) // the answer came while the mail was still held
      release()
      for (let i = 0; i < 50 && sent.length === 0; i++) await pause(20)
      expect(sent.map((m) => m.to)).toEqual(['designer@example.test'])
    } finally {
      release()
      server.ctx.mailer.send = send
    }
  })

  it('limits requests per target address (429 TOO_MANY_RESETS)', async () => {
    const c = new Client(server.url)
    await c.refreshCsrf()
    const statuses = []
    for (let i = 0; i < 4; i++)
      statuses.push((await c.post('/api/auth/password-reset', { email: 'someone-else@example.test' })).status)
    expect(statuses).toEqual([202, 202, 202, 429])
  })

  it('limits requests per client address', async () => {
    const s = await startTestServer({ passwordResetsPerAddress: 2 })
    try {
      const c = new Client(s.url)
      await c.refreshCsrf()
      const a = await c.post('/api/auth/password-reset', { email: 'a1@example.test' })
      const b = await c.post('/api/auth/password-reset', { email: 'a2@example.test' })
      const third = await c.post('/api/auth/password-reset', { email: 'a3@example.test' })
      expect([a.status, b.status, third.status]).toEqual([202, 202, 429])
      expect(third.body.error.code).toBe('TOO_MANY_RESETS')
    } finally {
      await s.stop()
    }
  })

  it('a new request voids older links, and a used link voids every other one', async () => {
    const s = await startTestServer()
    const mails: OutgoingMail[] = []
    s.ctx.mailer.send = async (m) => void mails.push(m)
    const linkOf = (m: OutgoingMail) => m.text.match(/\/reset\/([A-Za-z0-9_-]+)/)![1]
    const waitMails = async (n: number) => {
      for (let i = 0; i < 100 && mails.length < n; i++) await pause(20)
      expect(mails).toHaveLength(n)
    }
    try {
      const c = new Client(s.url)
      await c.refreshCsrf()
      await c.post('/api/auth/password-reset', { email: 'producer@example.test' }).expect(202)
      await waitMails(1)
      await c.post('/api/auth/password-reset', { email: 'producer@example.test' }).expect(202)
      await waitMails(2)
      const [older, newer] = mails.map(linkOf)
      const old = await c.post(`/api/auth/password-reset/${older}`, { password: 'a-new-password-1' })
      expect(old.status).toBe(410)
      await c.post(`/api/auth/password-reset/${newer}`, { password: 'a-new-password-2' }).expect(200)
      // A link made before the reset cannot be used after it either.
      const id = (
        await s.ctx.db
          .selectFrom('users')
          .select('id')
          .where('email', '=', 'producer@example.test')
          .executeTakeFirstOrThrow()
      ).id
      const unused = await s.ctx.db
        .selectFrom('password_resets')
        .select('id')
        .where('user_id', '=', id)
        .where('used_at', 'is', null)
        .execute()
      expect(unused).toHaveLength(0)
    } finally {
      await s.stop()
    }
  })
})

describe('demo mode stays on this machine', () => {
  it('refuses to start in demo mode with a PUBLIC_URL that is not loopback, saying what to do', async () => {
    await expect(startTestServer({ demo: true, publicUrl: 'https://sounds.studio.example' })).rejects.toThrow(
      /STRAYFIELD_DEMO=0.*user:create/s,
    )
  })

  it('starts without demo mode on a real address, and then publishes no demo password', async () => {
    const s = await startTestServer({ demo: false, publicUrl: 'https://sounds.studio.example' })
    try {
      const info = await new Client(s.url).get('/api/app-info').expect(200)
      expect(info.body).toEqual({ demo: false, demoAccounts: [], demoPassword: null })
    } finally {
      await s.stop()
    }
    const demo = await new Client(server.url).get('/api/app-info').expect(200)
    expect(demo.body.demoPassword).toBe(DEMO_PASSWORD)
  })

  it('reads the same rule from the environment (STRAYFIELD_DEMO default on, PUBLIC_URL)', async () => {
    await expect(
      startServer({ port: 0 }, { ...process.env, STRAYFIELD_DEMO: '', PUBLIC_URL: 'http://192.0.2.10:5170' }),
    ).rejects.toThrow(/not a loopback address/)
  })
})

describe('security headers', () => {
  it('over plain http: no HSTS, no upgrade-insecure-requests, styles and fonts from self only, no-store on /api', async () => {
    const res = await new Client(server.url).get('/api/health').expect(200)
    const csp = String(res.headers['content-security-policy'])
    expect(res.headers['strict-transport-security']).toBeUndefined()
    expect(csp).not.toContain('upgrade-insecure-requests')
    expect(csp).toMatch(/style-src 'self'(;|$)/)
    expect(csp).toMatch(/font-src 'self'(;|$)/)
    expect(res.headers['cache-control']).toBe('no-store')
  })

  it('over https (behind a proxy named in TRUST_PROXY): HSTS, upgrade-insecure-requests and a __Host- session cookie', async () => {
    const s = await startTestServer({ publicUrl: 'https://localhost', trustProxy: ['loopback'] })
    try {
      const c = new Client(s.url)
      const health = await c.get('/api/health')
      expect(health.headers['strict-transport-security']).toMatch(/max-age=\d+/)
      expect(String(health.headers['content-security-policy'])).toContain('upgrade-insecure-requests')
      const csrf = await c.agent.get('/api/auth/csrf').set('X-Forwarded-Proto', 'https')
      const login = await c.agent
        .post('/api/auth/login')
        .set('X-Forwarded-Proto', 'https')
        .set('x-csrf-token', csrf.body.token)
        .set('Cookie', (csrf.headers['set-cookie'] as unknown as string[]).map((x) => x.split(';')[0]).join('; '))
        .send({ email: 'admin@example.test', password: DEMO_PASSWORD })
      expect(login.status).toBe(200)
      const cookies = (login.headers['set-cookie'] as unknown as string[]).join('\n')
      expect(cookies).toMatch(/__Host-sf\.sid=[^;]+;.*Path=\/.*Secure/)
    } finally {
      await s.stop()
    }
  })
})
