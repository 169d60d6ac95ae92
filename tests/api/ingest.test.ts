import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import http from 'node:http'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Take } from '@shared/schemas/takes'
import { Peaks } from '@shared/schemas/analysis'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let rec: Client
let sessionId: number
let dir: string

const incoming = () => fs.readdirSync(path.join(server.ctx.config.storageDir, 'incoming'))
const takeCount = async () =>
  Number(
    (
      await server.ctx.db
        .selectFrom('takes')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )

beforeAll(async () => {
  server = await startTestServer()
  rec = await signedIn(server.url, 'recordist')
  sessionId = (
    await createSession(rec, { rig: { pickup: 'Induction coil', gainDb: 40, recorder: 'Two-track', notes: '' } })
  ).id
  dir = path.join(server.dir, 'files')
})
afterAll(async () => {
  await server.stop()
})

describe('capture sessions', () => {
  it('creates, reads and edits a session with its rig', async () => {
    const s = (await rec.get(`/api/capture-sessions/${sessionId}`).expect(200)).body.session
    expect(s).toMatchObject({
      title: 'Test capture',
      date: '2026-11-30',
      rig: { pickup: 'Induction coil', gainDb: 40, recorder: 'Two-track' },
    })
    const patched = await rec.patch(`/api/capture-sessions/${sessionId}`, { location: 'Bench 3', rig: { gainDb: 36 } })
    expect(patched.status).toBe(200)
    expect(patched.body.session).toMatchObject({ location: 'Bench 3', rig: { gainDb: 36, pickup: 'Induction coil' } })
    const bad = await rec.post('/api/capture-sessions', { title: '', date: 'yesterday' })
    expect(bad.status).toBe(400)
    expect(bad.body.error.message).toMatch(/date like/)
  })
})

describe('upload and measurement', () => {
  it('streams a sox-made WAV in, hashes it, measures it and serves peaks in wavesurfer form', async () => {
    const file = soxWav(path.join(dir, 'tone.wav'), { rate: 44100, bits: 16, channels: 2, seconds: 3 })
    const res = await uploadTake(rec, sessionId, file, 'tone.wav')
    expect(res.status).toBe(201)
    expect(res.body.take).toEqual({ id: expect.any(Number), filename: 'tone.wav', status: 'queued' })
    const take = Take.parse(await waitForTake(rec, res.body.take.id))
    expect(take.status).toBe('ready')
    // SHA-256 computed while streaming equals the file's (sha256sum, GNU coreutils).
    expect(take.sha256).toBe(execFileSync('sha256sum', [file]).toString().split(' ')[0])
    expect(take.sizeBytes).toBe(fs.statSync(file).size)
    // Format fields against soxi (Debian sox).
    expect(take.format).toMatchObject({
      container: 'RIFF',
      encoding: 'pcm',
      sampleRate: 44100,
      channels: 2,
      bitsPerSample: 16,
    })
    expect(take.format!.frames).toBe(Number(execFileSync('soxi', ['-s', file]).toString().trim()))
    // sox's "vol 0.5" sine: sample peak −6.02 dBFS (20·log10(0.5)).
    expect(take.analysis!.levels.samplePeakDbfs!).toBeCloseTo(-6.02, 1)
    expect(take.thumb).toHaveLength(48)

    const peaks = Peaks.parse((await rec.get(`/api/takes/${take.id}/peaks?maxPoints=500`).expect(200)).body)
    expect(peaks.data).toHaveLength(2)
    expect(peaks.data[0].length).toBeLessThanOrEqual(1000)
    expect(Math.max(...peaks.data[0])).toBeCloseTo(0.5, 2)
    expect(Math.min(...peaks.data[0])).toBeCloseTo(-0.5, 2)
    expect(peaks.durationSeconds).toBeCloseTo(3, 3)
  })

  it('keeps a UTF-8 file name and prefills the title from the INFO title ffmpeg wrote', async () => {
    const file = path.join(dir, 'labelled.wav')
    execFileSync('ffmpeg', [
      '-v',
      'error',
      '-y',
      '-f',
      'lavfi',
      '-i',
      'sine=frequency=440:duration=1',
      '-metadata',
      'title=Charger under load',
      '-metadata',
      'comment=coil at 2 cm',
      file,
    ])
    const res = await uploadTake(rec, sessionId, file, 'Ladegerät – Spule.wav')
    expect(res.status).toBe(201)
    const take = await waitForTake(rec, res.body.take.id)
    expect(take.filename).toBe('Ladegerät – Spule.wav')
    expect(take.title).toBe('Charger under load')
    expect(take.notes).toContain('coil at 2 cm')
  })

  it('refuses a file that is not a WAV by its content, whatever its name: 415, nothing left behind', async () => {
    const before = await takeCount()
    const res = await uploadTake(
      rec,
      sessionId,
      Buffer.from('ID3\u0003this is an mp3 pretending to be a wav'),
      'fake.wav',
    )
    expect(res.status).toBe(415)
    expect(res.body.error.code).toBe('UNSUPPORTED_AUDIO')
    expect(res.body.error.message).toContain('fake.wav')
    expect(res.body.error.details.reason).toMatch(/RIFF|WAVE/)
    expect(await takeCount()).toBe(before)
    expect(incoming()).toEqual([])
  })

  it('refuses an encoding the engine cannot read, naming it (A-law made by sox)', async () => {
    const file = soxWav(path.join(dir, 'alaw.wav'), { bits: 8, encoding: 'a-law', seconds: 1 })
    const res = await uploadTake(rec, sessionId, file, 'alaw.wav')
    expect(res.status).toBe(415)
    expect(res.body.error.message).toMatch(/alaw\.wav: .*(format tag|encoding)/i)
    expect(incoming()).toEqual([])
  })

  it('answers 409 DUPLICATE with the existing take for the same content', async () => {
    const file = soxWav(path.join(dir, 'dup.wav'), { seconds: 1, synth: ['pinknoise'] })
    const first = await uploadTake(rec, sessionId, file, 'dup.wav')
    expect(first.status).toBe(201)
    const before = await takeCount()
    const again = await uploadTake(rec, sessionId, file, 'dup-renamed.wav')
    expect(again.status).toBe(409)
    expect(again.body.error.code).toBe('DUPLICATE')
    expect(again.body.error.details.takeId).toBe(first.body.take.id)
    expect(await takeCount()).toBe(before)
    expect(incoming()).toEqual([])
  })

  it('answers 404 for an unknown capture session before storing anything', async () => {
    const file = soxWav(path.join(dir, 'nosession.wav'), { seconds: 1 })
    const res = await uploadTake(rec, 999999, file, 'nosession.wav')
    expect(res.status).toBe(404)
    expect(incoming()).toEqual([])
  })

  it('applies the capture session default source device and state to each upload', async () => {
    const designer = await signedIn(server.url, 'designer')
    const src = (await designer.post('/api/sources', { name: 'Test charger', kind: 'power-supply' }).expect(201)).body
      .source
    const s = await createSession(rec, { title: 'With default', defaultSourceId: src.id, defaultState: 'charging' })
    const file = soxWav(path.join(dir, 'withsource.wav'), { seconds: 1, synth: ['sine', '300'] })
    const res = await uploadTake(rec, s.id, file, 'withsource.wav')
    const take = (await rec.get(`/api/takes/${res.body.take.id}`)).body.take
    expect(take.sources).toEqual([{ sourceId: src.id, name: 'Test charger', kind: 'power-supply', state: 'charging' }])
  })

  it('does not let a producer upload', async () => {
    const producer = await signedIn(server.url, 'producer')
    const file = soxWav(path.join(dir, 'prod.wav'), { seconds: 1 })
    const res = await uploadTake(producer, sessionId, file, 'prod.wav')
    expect(res.status).toBe(403)
    expect(incoming()).toEqual([])
  })
})

describe('limits and cut-off uploads', () => {
  it('answers 413 over the size limit and deletes the partial file', async () => {
    const small = await startTestServer({ maxUploadBytes: 200_000 })
    try {
      const c = await signedIn(small.url, 'recordist')
      const s = await createSession(c)
      const file = soxWav(path.join(small.dir, 'big.wav'), { seconds: 10 })
      const res = await uploadTake(c, s.id, file, 'big.wav')
      expect(res.status).toBe(413)
      expect(res.body.error.code).toBe('TOO_LARGE')
      expect(fs.readdirSync(path.join(small.ctx.config.storageDir, 'incoming'))).toEqual([])
      expect(fs.readdirSync(path.join(small.ctx.config.storageDir, 'audio'))).toEqual([])
    } finally {
      await small.stop()
    }
  })

  it('leaves no file and no row when the client disconnects mid-upload', async () => {
    const before = await takeCount()
    const boundary = 'sfboundary'
    const cookie = (await rec.get('/api/auth/me')).request.cookies
    await new Promise<void>((resolve) => {
      const req = http.request(`${server.url}/api/capture-sessions/${sessionId}/takes`, {
        method: 'POST',
        headers: {
          'content-type': `multipart/form-data; boundary=${boundary}`,
          'content-length': String(5_000_000),
          'x-csrf-token': rec.token,
          cookie,
        },
      })
      req.on('error', () => resolve())
      req.write(
        `--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="cut.wav"\r\nContent-Type: audio/wav\r\n\r\n`,
      )
      req.write(Buffer.alloc(300_000, 7))
      setTimeout(() => {
        req.destroy()
        resolve()
      }, 300)
    })
    await expect.poll(() => incoming(), { timeout: 5000 }).toEqual([])
    expect(await takeCount()).toBe(before)
  })
})

describe('durable analysis jobs', () => {
  it('picks up a job interrupted by a restart and finishes it', async () => {
    const first = await startTestServer({ runJobs: false })
    const c = await signedIn(first.url, 'recordist')
    const s = await createSession(c)
    const file = soxWav(path.join(first.dir, 'restart.wav'), { seconds: 2, synth: ['brownnoise'] })
    const id = (await uploadTake(c, s.id, file, 'restart.wav')).body.take.id
    // As if the server died while measuring: the job is marked running.
    await first.ctx.db.updateTable('jobs').set({ status: 'running', attempts: 1 }).where('ref_id', '=', id).execute()
    const { dbFile, storageDir } = first.ctx.config
    await first.stop()

    const second = await startTestServer({ dbFile, storageDir })
    try {
      const c2 = await signedIn(second.url, 'recordist')
      const take = await waitForTake(c2, id)
      expect(take.status).toBe('ready')
      expect(take.analysis.loudness.integratedLufs).toEqual(expect.any(Number))
    } finally {
      await second.stop()
    }
  })

  it('ends failed with a readable reason when the audio cannot be read', async () => {
    const s2 = await startTestServer({ runJobs: false })
    try {
      const c = await signedIn(s2.url, 'recordist')
      const s = await createSession(c)
      const file = soxWav(path.join(s2.dir, 'vanish.wav'), { seconds: 1 })
      const id = (await uploadTake(c, s.id, file, 'vanish.wav')).body.take.id
      const row = await s2.ctx.db
        .selectFrom('takes')
        .select('audio_path')
        .where('id', '=', id)
        .executeTakeFirstOrThrow()
      fs.rmSync(s2.ctx.storage.abs(row.audio_path))
      await s2.ctx.jobs.start()
      const take = await waitForTake(c, id)
      expect(take.status).toBe('failed')
      // Fixed words, never the server's path (members read this text).
      expect(take.error).toMatch(/^FILE_MISSING: .*missing/)
      expect(take.error).not.toContain(s2.dir)
      expect(take.error).not.toMatch(/ENOENT|\//)
    } finally {
      await s2.stop()
    }
  })
})
