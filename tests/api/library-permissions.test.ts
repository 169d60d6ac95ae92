// Who may change what in the library, role by role, with real data: every
// edit route is called by every role on a take the caller uploaded and on one
// somebody else uploaded, and must succeed or be refused exactly as the rules say.
//   takes:edit-any (admin, designer): edit, tag, bulk-edit and mark regions on any take
//   takes:edit-own (recordist): the same on takes they uploaded, bulk edits excepted
//   comments:write (everyone): comment, reply, resolve and reopen; change only one's own text
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { ROLES, type Role } from '@shared/permissions'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { insertSession, insertTakeRow, userIds } from './library-fixtures'

let server: TestServer
const as = {} as Record<Role, Client>
let users: Awaited<ReturnType<typeof userIds>>
/** One take uploaded under each role's name (producers and collaborators cannot upload; their rows are written directly). */
const uploaded = {} as Record<Role, number>
let recordistTake: number
let designerTake: number

beforeAll(async () => {
  server = await startTestServer()
  users = await userIds(server.ctx.db)
  const session = await insertSession(server.ctx.db, 'Permission bench')
  for (const role of ROLES)
    uploaded[role] = await insertTakeRow(server.ctx.db, {
      sessionId: session,
      uploaderId: users[role],
      title: `Upload by ${role}`,
      duration: 60,
    })
  recordistTake = uploaded.recordist
  designerTake = uploaded.designer
  for (const role of ROLES) as[role] = await signedIn(server.url, role)
})
afterAll(async () => {
  await server.stop()
})

const EDIT_ANY: Role[] = ['admin', 'designer']
/** A take somebody else uploaded. */
const othersTake = (role: Role) => (role === 'recordist' ? designerTake : recordistTake)
const mayEdit = (role: Role, take: number) =>
  EDIT_ANY.includes(role) || (role === 'recordist' && take === uploaded.recordist)

async function newRegion(take: number) {
  const res = await as.admin
    .post(`/api/takes/${take}/regions`, { name: 'Fixture region', startSeconds: 1, endSeconds: 2 })
    .expect(201)
  return res.body.region.id as number
}

async function newComment(take: number, role: Role = 'producer') {
  const res = await as[role].post(`/api/takes/${take}/comments`, { body: `Written by ${role}` }).expect(201)
  return res.body.comment.id as number
}

function expectAllowed(status: number, ok: number, allowed: boolean, what: string, body: { error?: { code: string } }) {
  if (allowed) expect(status, what).toBe(ok)
  else {
    expect(status, what).toBe(403)
    expect(body.error?.code, what).toBe('FORBIDDEN')
  }
}

for (const role of ROLES) {
  describe(`as ${role}`, () => {
    const takes = () =>
      [
        ['a take they uploaded', uploaded[role]],
        ["somebody else's take", othersTake(role)],
      ] as const

    it('PATCH /api/takes/:id', async () => {
      for (const [what, take] of takes()) {
        const res = await as[role].patch(`/api/takes/${take}`, { notes: `${role} notes`, tags: [`by ${role}`] })
        expectAllowed(res.status, 200, mayEdit(role, take), `${role} on ${what}`, res.body)
        const after = (await as.admin.get(`/api/takes/${take}`)).body.take
        expect(after.notes === `${role} notes`, `${role} on ${what}: stored`).toBe(mayEdit(role, take))
      }
    })

    it('POST /api/takes/bulk', async () => {
      const res = await as[role].post('/api/takes/bulk', {
        ids: [recordistTake, designerTake],
        addTags: [`bulk ${role}`],
      })
      expectAllowed(res.status, 200, EDIT_ANY.includes(role), `${role} bulk`, res.body)
      const tags = (await as.admin.get(`/api/takes/${recordistTake}`)).body.take.tags as string[]
      expect(tags.includes(`bulk ${role}`)).toBe(EDIT_ANY.includes(role))
    })

    it('POST, PATCH and DELETE /api/takes/:id/regions', async () => {
      for (const [what, take] of takes()) {
        const allowed = mayEdit(role, take)
        const created = await as[role].post(`/api/takes/${take}/regions`, {
          name: `${role} region`,
          startSeconds: 3,
          endSeconds: 4,
        })
        expectAllowed(created.status, 201, allowed, `${role} creates on ${what}`, created.body)

        const region = await newRegion(take)
        const changed = await as[role].patch(`/api/takes/${take}/regions/${region}`, { name: `${role} renamed` })
        expectAllowed(changed.status, 200, allowed, `${role} renames on ${what}`, changed.body)

        const removed = await as[role].delete(`/api/takes/${take}/regions/${region}`)
        expectAllowed(removed.status, 200, allowed, `${role} deletes on ${what}`, removed.body)
        const left = (await as.admin.get(`/api/takes/${take}/regions`)).body.regions as { id: number; name: string }[]
        expect(
          left.some((r) => r.id === region),
          `${role} deletes on ${what}: still there`,
        ).toBe(!allowed)
      }
    })

    it('reads regions, comments, history and suggestions', async () => {
      for (const path of [
        `/api/takes/${designerTake}/regions`,
        `/api/takes/${designerTake}/comments`,
        `/api/takes/${designerTake}/history`,
        '/api/tags',
        '/api/states',
      ]) {
        expect((await as[role].get(path)).status, path).toBe(200)
      }
    })

    it('comments and replies on any take', async () => {
      for (const [what, take] of takes()) {
        const res = await as[role].post(`/api/takes/${take}/comments`, { body: `${role} was here`, atSeconds: 5 })
        expect(res.status, `${role} on ${what}`).toBe(201)
        const reply = await as[role].post(`/api/takes/${take}/comments`, {
          body: 'and again',
          parentId: res.body.comment.id,
        })
        expect(reply.status).toBe(201)
      }
    })

    it("changes the text of their own comment only, and resolves anybody's", async () => {
      const own = await newComment(designerTake, role)
      const mine = await as[role].patch(`/api/takes/${designerTake}/comments/${own}`, { body: `${role}, edited` })
      expect(mine.status).toBe(200)
      expect(mine.body.comment.body).toBe(`${role}, edited`)

      const author: Role = role === 'producer' ? 'collaborator' : 'producer'
      const theirs = await newComment(designerTake, author)
      const edit = await as[role].patch(`/api/takes/${designerTake}/comments/${theirs}`, { body: `${role} rewrote it` })
      expectAllowed(edit.status, 200, false, `${role} edits ${author}'s text`, edit.body)
      const resolve = await as[role].patch(`/api/takes/${designerTake}/comments/${theirs}`, { resolved: true })
      expect(resolve.status).toBe(200)
      expect(resolve.body.comment).toMatchObject({
        body: `Written by ${author}`,
        resolved: true,
        resolvedBy: { id: users[role] },
      })
      const reopen = await as[role].patch(`/api/takes/${designerTake}/comments/${theirs}`, { resolved: false })
      expect(reopen.body.comment.resolved).toBe(false)
      // Sending the unchanged text along with a resolve is not an edit.
      const same = await as[role].patch(`/api/takes/${designerTake}/comments/${theirs}`, {
        body: `Written by ${author}`,
        resolved: true,
      })
      expect(same.status).toBe(200)
      expect(same.body.comment.editedAt).toBeNull()
    })
  })
}

describe('signed out', () => {
  it('gets 401 on every library route', async () => {
    const { Client } = await import('../helpers/server')
    const anon = new Client(server.url)
    await anon.refreshCsrf()
    const calls: [string, string][] = [
      ['patch', `/api/takes/${designerTake}`],
      ['post', '/api/takes/bulk'],
      ['get', `/api/takes/${designerTake}/history`],
      ['get', '/api/tags'],
      ['get', '/api/states'],
      ['get', `/api/takes/${designerTake}/regions`],
      ['post', `/api/takes/${designerTake}/regions`],
      ['patch', `/api/takes/${designerTake}/regions/1`],
      ['delete', `/api/takes/${designerTake}/regions/1`],
      ['get', `/api/takes/${designerTake}/comments`],
      ['post', `/api/takes/${designerTake}/comments`],
      ['patch', `/api/takes/${designerTake}/comments/1`],
    ]
    for (const [method, path] of calls) {
      const res = await anon.send(method, path, { body: 'x' })
      expect(res.status, `${method} ${path}`).toBe(401)
    }
  })
})
