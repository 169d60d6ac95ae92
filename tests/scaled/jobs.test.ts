// Jobs across machines: with REDIS_URL the API server hands analysis and pack
// builds to BullMQ, `npm run worker` processes do them (given Redis and the
// storage, and a database path that does not exist, to prove they never need
// one) and the server records the answers. A worker killed with kill -9 in the
// middle of a job: another worker runs it again and the result is recorded
// once. Loudness is checked against ffmpeg's ebur128 (±0.1 LU, EBU Tech 3341
// §2.9); the zip by Info-ZIP's `unzip -t`.
import { spawn, execFileSync, type ChildProcess } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Queue } from 'bullmq'
import { startServer, type RunningServer } from '../../server/server'
import { queueName, redisConnection } from '../../server/jobs/bullmq-queue'
import { getSetting } from '../../server/core/settings'
import { signedIn, type Client } from '../helpers/server'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { ffmpegEbur128 } from '../helpers/reference-tools'
import { binary, filesUnder, soxMake, waitForBuild } from '../api/packs-fixtures'

const redisUrl = process.env.REDIS_URL
const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-scaled-jobs-'))
const storageDir = path.join(dir, 'storage')
const workerEntry = new URL('../../server/cli/worker.ts', import.meta.url).pathname
const workers: ChildProcess[] = []
let server: RunningServer
let admin: Client
let designer: Client
let sessionId: number

/** Starts `npm run worker`'s entry; resolves once it listens to the queues. */
function startWorker(): Promise<ChildProcess> {
  const child = spawn(process.execPath, ['--import', 'tsx', workerEntry], {
    env: {
      ...process.env,
      REDIS_URL: redisUrl,
      STRAYFIELD_STORAGE: storageDir,
      STRAYFIELD_DB: path.join(dir, 'no-such-folder', 'never.sqlite'),
      STRAYFIELD_JOB_LOCK_MS: '6000',
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  })
  workers.push(child)
  let err = ''
  child.stderr!.on('data', (d) => (err += d))
  return new Promise((resolve, reject) => {
    child.stdout!.on('data', (d) => String(d).includes('worker ready') && resolve(child))
    child.once('exit', (code) => reject(new Error(`worker exited (${code}): ${err}`)))
  })
}

const killed = (c: ChildProcess) =>
  new Promise<void>((r) => (c.exitCode !== null || c.signalCode ? r() : c.once('exit', () => r())))

beforeAll(async () => {
  if (!redisUrl) throw new Error('REDIS_URL must name a Redis server (npm run test:scaled starts one)')
  server = await startServer(
    {
      port: 0,
      dbFile: path.join(dir, 'db.sqlite'),
      storageDir,
      demo: true,
      demoAudio: false,
      clientDir: path.join(dir, 'no-client'),
      redisUrl,
    },
    { ...process.env, SMTP_URL: '', SESSION_SECRET: '' },
  )
  admin = await signedIn(server.url, 'admin')
  designer = await signedIn(server.url, 'designer')
  sessionId = (await createSession(admin)).id
}, 60_000)
afterAll(async () => {
  for (const w of workers) w.kill('SIGKILL')
  await Promise.all(workers.map(killed))
  await server?.stop()
  fs.rmSync(dir, { recursive: true, force: true })
})

const noise = (name: string, seconds: number, db: number) =>
  soxMake(path.join(dir, name), { rate: 48000, bits: 24, channels: 2 }, [
    'synth',
    String(seconds),
    'pinknoise',
    'vol',
    `${db}dB`,
  ])

describe('jobs through BullMQ', () => {
  it('measures takes in a worker process without the database, and records the numbers', async () => {
    const worker = await startWorker()
    const file = noise('short.wav', 20, -22)
    const res = await uploadTake(admin, sessionId, file, 'short.wav')
    expect(res.status).toBe(201)
    const take = await waitForTake(admin, res.body.take.id, 120_000)
    expect(take.error).toBeNull()
    expect(take.status).toBe('ready')
    expect(Math.abs(take.analysis.loudness.integratedLufs - ffmpegEbur128(file).integratedLufs)).toBeLessThanOrEqual(
      0.1,
    )
    worker.kill('SIGKILL')
    await killed(worker)
  }, 180_000)

  it('a worker killed with kill -9 mid-job: another runs it again, and the result is recorded once', async () => {
    const first = await startWorker()
    const file = noise('long.wav', 600, -20)
    const res = await uploadTake(admin, sessionId, file, 'long.wav')
    expect(res.status).toBe(201)
    const id = res.body.take.id
    // Caught in the middle: the first worker has reported progress (through Redis, onto the take).
    for (;;) {
      const t = (await admin.get(`/api/takes/${id}`)).body.take
      expect(t.status).not.toBe('ready')
      if (t.status === 'analyzing' && t.progress > 0) break
      await new Promise((r) => setTimeout(r, 50))
    }
    first.kill('SIGKILL')
    await killed(first)
    await startWorker()
    const take = await waitForTake(admin, id, 300_000)
    expect(take.status).toBe('ready')
    expect(Math.abs(take.analysis.loudness.integratedLufs - ffmpegEbur128(file).integratedLufs)).toBeLessThanOrEqual(
      0.1,
    )
    // Recorded once: one job row, done, one "measured" entry in the take's history.
    const jobs = await server.ctx.db
      .selectFrom('jobs')
      .selectAll()
      .where('ref_id', '=', id)
      .where('kind', '=', 'analyze-take')
      .execute()
    expect(jobs.map((j) => j.status)).toEqual(['done'])
    const history = (await admin.get(`/api/takes/${id}/history`)).body.events as { kind: string }[]
    expect(history.filter((e) => e.kind === 'measured')).toHaveLength(1)
    // And it was indeed run again: BullMQ counted the stall of the killed worker's attempt.
    const queue = new Queue(queueName('analyze-take'), { connection: redisConnection(redisUrl!) })
    try {
      const ns = await getSetting(server.ctx.db, 'job_namespace')
      const job = await queue.getJob(`${ns}-${jobs[0].id}`)
      expect(job?.stalledCounter).toBeGreaterThanOrEqual(1)
      expect(job?.finishedOn).toBeGreaterThan(0)
    } finally {
      await queue.close()
    }
  }, 420_000)

  it('builds a pack in a worker process: one zip that unzip -t passes, its items recorded once', async () => {
    const file = noise('item.wav', 8, -24)
    const t = (await uploadTake(admin, sessionId, file, 'item.wav')).body.take
    expect((await waitForTake(admin, t.id, 120_000)).status).toBe('ready')
    const pack = (await designer.post('/api/packs', { name: 'Far away' }).expect(201)).body.pack
    await designer
      .post(`/api/packs/${pack.id}/items/batch`, { items: [{ takeId: t.id }, { takeId: t.id, kind: 'loop' }] })
      .expect(201)
    const buildId = (await designer.post(`/api/packs/${pack.id}/builds`).expect(202)).body.build.id
    const b = await waitForBuild(designer, buildId, 180_000)
    expect(b.status).toBe('done')
    expect(b.progress).toBe(1)
    const zip = path.join(dir, 'far.zip')
    fs.writeFileSync(
      zip,
      (await designer.get(`/api/pack-builds/${buildId}/download`).buffer(true).parse(binary).expect(200)).body,
    )
    expect(execFileSync('unzip', ['-t', zip], { encoding: 'utf8' })).toMatch(/No errors detected/)
    const items = await server.ctx.db
      .selectFrom('pack_build_items')
      .select('position')
      .where('build_id', '=', buildId)
      .execute()
    expect(items.map((i) => i.position).sort()).toEqual([1, 2])
    expect(
      filesUnder(path.join(storageDir, 'builds')).filter((f) => f.startsWith('tmp') || f.endsWith('.part')),
    ).toEqual([])
  }, 240_000)
})
