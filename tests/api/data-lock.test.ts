// A second server on the same data cannot harm the live one (issue 9): it
// refuses to start, naming the process that holds the data, before it sweeps
// uploads in flight or queues jobs again. Across processes (a second `npm run
// serve` by mistake) and within one.
import { execFile } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { promisify } from 'node:util'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { startServer } from '../../server/server'
import { DataLockedError } from '../../server/core/data-lock'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let live: TestServer

beforeAll(async () => {
  live = await startTestServer({ runJobs: false })
}, 60_000)
afterAll(async () => {
  await live?.stop()
})

describe('one server per data folder', () => {
  it('a second server in another process refuses to start, names the holder, and leaves uploads in flight and running jobs alone', async () => {
    const { dbFile, storageDir } = live.ctx.config
    const c = await signedIn(live.url, 'recordist')
    const s = await createSession(c)
    const id = (await uploadTake(c, s.id, soxWav(path.join(live.dir, 'a.wav'), { seconds: 1 }), 'a.wav')).body.take.id
    await waitForTake(c, id)
    // As if the live server were measuring it right now, with an upload streaming in.
    await live.ctx.db.updateTable('jobs').set({ status: 'running', attempts: 1 }).where('ref_id', '=', id).execute()
    const inFlight = path.join(storageDir, 'incoming', 'in-flight.part')
    fs.writeFileSync(inFlight, 'partial body')

    const second = await promisify(execFile)('npx', ['tsx', 'server/main.ts'], {
      env: { ...process.env, PORT: '0', STRAYFIELD_DB: dbFile, STRAYFIELD_STORAGE: storageDir, STRAYFIELD_DEMO: '0' },
      timeout: 60_000,
    }).then(
      () => ({ code: 0, stderr: '' }),
      (err: { code: number; stderr: string }) => ({ code: err.code, stderr: err.stderr }),
    )
    expect(second.code).toBe(1)
    expect(second.stderr).toContain(`Another Strayfield server (process ${process.pid} on`)
    expect(second.stderr).toContain(dbFile)
    expect(fs.existsSync(inFlight)).toBe(true)
    const job = await live.ctx.db.selectFrom('jobs').select('status').where('ref_id', '=', id).executeTakeFirstOrThrow()
    expect(job.status).toBe('running')
    fs.rmSync(inFlight)
  }, 90_000)

  it('within one process too; the data is free again once the live server stops', async () => {
    const other = await startTestServer()
    const { dbFile, storageDir } = other.ctx.config
    await expect(startServer({ port: 0, dbFile, storageDir, demo: false })).rejects.toThrow(DataLockedError)
    // Only the storage folder shared: refused as well, naming it.
    await expect(
      startServer({ port: 0, dbFile: path.join(other.dir, 'elsewhere.sqlite'), storageDir, demo: false }),
    ).rejects.toThrow(`the storage folder ${storageDir}`)
    await other.stop()
    const next = await startServer({
      port: 0,
      dbFile,
      storageDir,
      demo: false,
      clientDir: path.join(other.dir, 'none'),
    })
    await next.stop()
  }, 60_000)
})
