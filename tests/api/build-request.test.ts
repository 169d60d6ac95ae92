// A pack build request is one transaction (issue 9): the build row, its job and
// the link between them are written together or not at all. A failure between
// the writes (here: the job queue refusing) leaves no queued build that no job
// would ever run, and the next request gets version 1, not 2.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { newSession, SIGNALS, uploadMeasured, waitForBuild } from './packs-fixtures'

let server: TestServer

beforeAll(async () => {
  server = await startTestServer()
}, 60_000)
afterAll(async () => {
  await server?.stop()
})

describe('build request', () => {
  it('writes the build and its job together or not at all', async () => {
    const admin = await signedIn(server.url, 'admin')
    const designer = await signedIn(server.url, 'designer')
    const take = await uploadMeasured(admin, await newSession(admin), SIGNALS.noise(path.join(server.dir, 'n.wav'), 2))
    const pack = (await designer.post('/api/packs', { name: 'One unit' })).body.pack
    await designer.post(`/api/packs/${pack.id}/items/batch`, { items: [{ takeId: take.id }] }).expect(201)

    const jobs = server.ctx.jobs
    const enqueue = jobs.enqueue.bind(jobs)
    jobs.enqueue = async () => {
      throw new Error('the job queue went away')
    }
    try {
      const res = await designer.post(`/api/packs/${pack.id}/builds`)
      expect(res.status).toBe(500)
    } finally {
      jobs.enqueue = enqueue
    }
    const rows = await server.ctx.db
      .selectFrom('pack_builds')
      .select(['id', 'job_id', 'status'])
      .where('pack_id', '=', pack.id)
      .execute()
    expect(rows).toEqual([])

    const ok = await designer.post(`/api/packs/${pack.id}/builds`).expect(202)
    expect(ok.body.build.version).toBe(1)
    const row = await server.ctx.db
      .selectFrom('pack_builds')
      .select(['job_id'])
      .where('id', '=', ok.body.build.id)
      .executeTakeFirstOrThrow()
    expect(row.job_id).toEqual(expect.any(Number))
    expect((await waitForBuild(designer, ok.body.build.id)).status).toBe('done')
  }, 60_000)
})
