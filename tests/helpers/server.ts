import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import request from 'supertest'
import type { Config } from '../../server/core/config'
import { startServer, type RunningServer } from '../../server/server'

export const DEMO_PASSWORD = 'strayfield-demo'

export type TestServer = RunningServer & { dir: string }

/** A real server on a free loopback port with a fresh SQLite file and storage folder. */
export async function startTestServer(overrides: Partial<Config> = {}): Promise<TestServer> {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-test-'))
  const server = await startServer(
    {
      port: 0,
      dbFile: path.join(dir, 'test.sqlite'),
      storageDir: path.join(dir, 'storage'),
      demo: true,
      demoAudio: false,
      clientDir: path.join(dir, 'no-client'),
      // Jobs in this process even when the environment names a Redis (the scaled suite sets REDIS_URL).
      redisUrl: null,
      ...overrides,
    },
    { ...process.env, SMTP_URL: overrides.smtpUrl ?? '', SESSION_SECRET: '' },
  )
  return { ...server, dir }
}

/** A cookie-keeping HTTP client that sends the CSRF token on every state-changing call. */
export class Client {
  readonly agent: ReturnType<typeof request.agent>
  token = ''

  constructor(readonly url: string) {
    this.agent = request.agent(url)
  }

  async refreshCsrf(): Promise<string> {
    const res = await this.agent.get('/api/auth/csrf').expect(200)
    this.token = res.body.token
    return this.token
  }

  get(p: string) {
    return this.agent.get(p)
  }
  post(p: string, body?: object) {
    return this.agent
      .post(p)
      .set('x-csrf-token', this.token)
      .send(body ?? {})
  }
  patch(p: string, body?: object) {
    return this.agent
      .patch(p)
      .set('x-csrf-token', this.token)
      .send(body ?? {})
  }
  put(p: string, body?: object) {
    return this.agent
      .put(p)
      .set('x-csrf-token', this.token)
      .send(body ?? {})
  }
  delete(p: string) {
    return this.agent.delete(p).set('x-csrf-token', this.token)
  }
  send(method: string, p: string, body?: object) {
    const m = method.toLowerCase() as 'get' | 'post' | 'patch' | 'put' | 'delete'
    if (m === 'get') return this.get(p)
    if (m === 'delete') return this.delete(p)
    return this[m](p, body)
  }

  async login(email: string, password = DEMO_PASSWORD) {
    await this.refreshCsrf()
    const res = await this.post('/api/auth/login', { email, password })
    // The session id changes on sign-in, and the token is tied to it.
    await this.refreshCsrf()
    return res
  }
}

export async function signedIn(url: string, role: string): Promise<Client> {
  const c = new Client(url)
  const res = await c.login(`${role}@example.test`)
  if (res.status !== 200) throw new Error(`sign-in as ${role} failed: ${res.status} ${JSON.stringify(res.body)}`)
  return c
}
