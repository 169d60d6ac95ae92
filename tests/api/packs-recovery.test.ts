// Builds that do not go to plan: a take's audio file gone (the build fails,
// names the item and why, and leaves no zip or temp render behind), and a
// server stopped in the middle of a build (the durable job resumes at the next
// start on the same database and storage and finishes; the stop reaches the
// build's threads through its AbortSignal and leaves no partial zip or render).
// The finished zip is checked by Info-ZIP's `unzip -t`.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { startServer, type RunningServer } from '../../server/server'
import { binary, filesUnder, newSession, SIGNALS, soxMake, uploadMeasured, waitForBuild } from './packs-fixtures'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'

let server: TestServer
let designer: Client
let admin: Client
let sessionId: number

beforeAll(async () => {
  server = await startTestServer()
  designer = await signedIn(server.url, 'designer')
  admin = await signedIn(server.url, 'admin')
  sessionId = await newSession(admin)
}, 60_000)
afterAll(async () => {
  await server?.stop()
})

const buildsDir = (s: RunningServer) => path.join(s.ctx.config.storageDir, 'builds')

describe('a failing build', () => {
  it('ends failed, names the item and the reason, and leaves no zip and no temp files', async () => {
    const ok = await uploadMeasured(admin, sessionId, SIGNALS.noise(path.join(server.dir, 'ok.wav'), 2))
    const lost = await uploadMeasured(admin, sessionId, SIGNALS.hum(path.join(server.dir, 'lost.wav'), 2))
    const pack = (await designer.post('/api/packs', { name: 'Doomed', namingTemplate: 'hum_transformer_{index}' })).body
      .pack
    await designer
      .post(`/api/packs/${pack.id}/items/batch`, {
        items: [{ takeId: ok.id }, { takeId: lost.id }, { takeId: ok.id, startSeconds: 0.5, endSeconds: 1 }],
      })
      .expect(201)
    const row = await server.ctx.db
      .selectFrom('takes')
      .select('audio_path')
      .where('id', '=', lost.id)
      .executeTakeFirstOrThrow()
    await server.ctx.storage.remove(row.audio_path) // the file and, under the scaled suite, the bucket's copy

    const started = await designer.post(`/api/packs/${pack.id}/builds`).expect(202)
    const b = await waitForBuild(designer, started.body.build.id)
    expect(b.status).toBe('failed')
    expect(b.error).toBe(`item 2 (hum_transformer_02): take ${lost.id}'s audio file is missing`)
    expect(b.failedItem).toEqual({ position: 2, itemId: expect.any(Number), name: 'hum_transformer_02' })
    expect(b.sizeBytes).toBeNull()
    expect(b.downloadUrl).toBeNull()
    // Nothing under builds/ but (possibly empty) folders: no zip, no partial zip, no temp render.
    expect(filesUnder(buildsDir(server))).toEqual([])
    const dl = await designer.get(`/api/pack-builds/${b.id}/download`)
    expect(dl.status).toBe(409)
    expect(dl.body.error.code).toBe('BUILD_NOT_DONE')
    const job = await server.ctx.db
      .selectFrom('jobs')
      .selectAll()
      .where('kind', '=', 'build-pack')
      .where('ref_id', '=', b.id)
      .executeTakeFirstOrThrow()
    expect(job).toMatchObject({ status: 'failed', error: b.error })
  })
})

describe('a build interrupted by a restart', () => {
  it('is queued again at the next start on the same database and storage, re-runs and finishes', async () => {
    const dir = fs.mkdtempSync(path.join(server.dir, 'restart-'))
    const overrides = {
      port: 0,
      dbFile: path.join(dir, 'db.sqlite'),
      storageDir: path.join(dir, 'storage'),
      demo: true,
      demoAudio: false,
      clientDir: path.join(dir, 'no-client'),
      // Jobs in this process even under the scaled suite's REDIS_URL: the restart is what is tested.
      redisUrl: null,
    }
    const env = { ...process.env, SMTP_URL: '', SESSION_SECRET: '' }
    let first: RunningServer | null = await startServer(overrides, env)
    let second: RunningServer | null = null
    try {
      const a = await signedIn(first.url, 'admin')
      const d = await signedIn(first.url, 'designer')
      // 90 s of 48 kHz 24-bit stereo: long enough that the build is caught running.
      const file = soxMake(path.join(dir, 'long.wav'), { rate: 48000, bits: 24, channels: 2 }, [
        'synth',
        '90',
        'pinknoise',
        'vol',
        '-20dB',
      ])
      const take = await uploadMeasured(a, await newSession(a), file)
      const pack = (await d.post('/api/packs', { name: 'Long one' })).body.pack
      await d
        .post(`/api/packs/${pack.id}/items/batch`, { items: [{ takeId: take.id }, { takeId: take.id, kind: 'loop' }] })
        .expect(201)
      const buildId = (await d.post(`/api/packs/${pack.id}/builds`).expect(202)).body.build.id
      for (;;) {
        const b = (await d.get(`/api/pack-builds/${buildId}`)).body.build
        if (b.status === 'running' && b.progress > 0) break
        expect(b.status).not.toBe('done')
        await new Promise((r) => setTimeout(r, 10))
      }
      const stoppedDir = buildsDir(first)
      await first.stop()
      first = null
      // The stop aborted the build's task and its renders, and the job swept what they had written.
      expect(filesUnder(stoppedDir)).toEqual([])

      const interrupted = await (async () => {
        const { openDatabase } = await import('../../server/core/database')
        const db = openDatabase(overrides.dbFile)
        try {
          return {
            build: await db
              .selectFrom('pack_builds')
              .select(['status', 'zip_path'])
              .where('id', '=', buildId)
              .executeTakeFirstOrThrow(),
            job: await db
              .selectFrom('jobs')
              .select(['status', 'attempts'])
              .where('kind', '=', 'build-pack')
              .where('ref_id', '=', buildId)
              .executeTakeFirstOrThrow(),
          }
        } finally {
          await db.destroy()
        }
      })()
      expect(interrupted.build).toEqual({ status: 'running', zip_path: null })
      expect(interrupted.job).toEqual({ status: 'running', attempts: 1 })

      second = await startServer(overrides, env)
      const d2 = await signedIn(second.url, 'designer')
      const done = await waitForBuild(d2, buildId, 120_000)
      expect(done.status).toBe('done')
      // Started twice: interrupted once, then run from scratch to the end.
      const job = () =>
        second!.ctx.db
          .selectFrom('jobs')
          .select(['status', 'attempts'])
          .where('kind', '=', 'build-pack')
          .where('ref_id', '=', buildId)
          .executeTakeFirstOrThrow()
      await expect.poll(job, { timeout: 10_000 }).toEqual({ status: 'done', attempts: 2 })
      const zip = path.join(dir, 'resumed.zip')
      fs.writeFileSync(
        zip,
        (await d2.get(`/api/pack-builds/${buildId}/download`).buffer(true).parse(binary).expect(200)).body,
      )
      expect(execFileSync('unzip', ['-t', zip], { encoding: 'utf8' })).toMatch(/No errors detected/)
      // Only the finished zip is left: no partial zip, no temp renders.
      expect(filesUnder(buildsDir(second))).toEqual([path.join(`pack-${pack.id}`, `build-${buildId}-v1.zip`)])
    } finally {
      await first?.stop()
      await second?.stop()
    }
  }, 180_000)
})
