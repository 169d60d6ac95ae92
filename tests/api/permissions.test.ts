// Every route × every role, generated from the one permission table in shared/:
// a role the table denies gets 403 FORBIDDEN, a role it allows never does, and
// nobody signed out gets past a non-public route.
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { ROLES, can } from '@shared/permissions'
import { listRoutes, type RouteSpec } from '../../server/core/routes'
import { Client, signedIn, startTestServer, type TestServer } from '../helpers/server'

let server: TestServer
let routes: RouteSpec[]
const clients: Record<string, Client> = {}

// Parameters are filled with values that name nothing, so allowed calls end in
// 400/404/410 rather than changing the demo data.
const fill = (path: string) => path.replace(/:token/g, 'x'.repeat(43)).replace(/:[a-zA-Z]+/g, '999999')

beforeAll(async () => {
  server = await startTestServer()
  const { createApp } = await import('../../server/app')
  routes = listRoutes((await createApp(server.ctx)).app)
  for (const role of ROLES) clients[role] = await signedIn(server.url, role)
})
afterAll(async () => {
  await server.stop()
})

describe('permission matrix', () => {
  it('covers the routes of the app', () => {
    expect(routes.length).toBeGreaterThan(10)
    expect(routes.some((r) => r.access === 'team:manage')).toBe(true)
  })

  for (const role of ROLES) {
    it(`gives ${role} exactly what the table allows on every route`, async () => {
      const wrong: string[] = []
      for (const r of routes) {
        if (r.path === '/api/auth/logout') continue // would end the client's session
        const res = await clients[role].send(r.method, fill(r.path), {})
        const allowed = r.access === 'public' || r.access === 'signed-in' || can(role, r.access)
        const got403 = res.status === 403 && res.body?.error?.code === 'FORBIDDEN'
        if (allowed === got403) wrong.push(`${r.method.toUpperCase()} ${r.path} → ${res.status} (${r.access})`)
        if (res.status >= 500) wrong.push(`${r.method.toUpperCase()} ${r.path} → ${res.status}`)
      }
      expect(wrong).toEqual([])
    })
  }

  it('answers 401 UNAUTHENTICATED to a signed-out client on every non-public route', async () => {
    const anon = new Client(server.url)
    await anon.refreshCsrf()
    const wrong: string[] = []
    for (const r of routes.filter((x) => x.access !== 'public')) {
      const res = await anon.send(r.method, fill(r.path), {})
      if (res.status !== 401 || res.body?.error?.code !== 'UNAUTHENTICATED')
        wrong.push(`${r.method} ${r.path} → ${res.status}`)
    }
    expect(wrong).toEqual([])
  })
})
