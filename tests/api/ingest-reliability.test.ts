// Issue 9, "nothing freezes" and "nothing is lost" on the ingest path: huge
// metadata lists are bounded (hostile text: ingest-freeze.test.ts), repeated filters answer 400, parallel uploads
// of the same bytes keep exactly one take with its audio intact, and a take
// whose measuring failed can be measured again.
import { createHash } from 'node:crypto'
import fs from 'node:fs'
import http from 'node:http'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'
import { manyEntriesWav } from '../helpers/hostile-wav'
import { failureText } from '../../server/ingest/remeasure'
import { WavFormatError } from '../../server/audio/wav-reader'

let server: TestServer
let rec: Client
let designer: Client
let sessionId: number

beforeAll(async () => {
  server = await startTestServer()
  rec = await signedIn(server.url, 'recordist')
  designer = await signedIn(server.url, 'designer')
  sessionId = (await createSession(rec)).id
}, 60_000)
afterAll(async () => {
  await server?.stop()
})

const sha = (p: string) => createHash('sha256').update(fs.readFileSync(p)).digest('hex')

describe('nothing freezes', () => {
  it('200,000 INFO entries and cue points: measured with at most 1024 of each kept, and a note of the rest', async () => {
    const file = path.join(server.dir, 'many.wav')
    fs.writeFileSync(file, manyEntriesWav(200_000))
    const res = await uploadTake(rec, sessionId, file, 'many.wav')
    expect(res.status).toBe(201)
    const take = await waitForTake(rec, res.body.take.id)
    expect(take.status).toBe('ready')
    expect(take.analysis.metadata.cues).toHaveLength(1024)
    expect(Object.keys(take.analysis.metadata.info).length).toBeLessThanOrEqual(1024)
    expect(take.analysis.metadata.dropped).toContain('cue: 200000 entries, read the first 1024')
    const row = await server.ctx.db
      .selectFrom('takes')
      .select('analysis_json')
      .where('id', '=', take.id)
      .executeTakeFirstOrThrow()
    expect(row.analysis_json!.length).toBeLessThan(512 * 1024)
  })

  it('repeated filters: 999 tag= or sourceId= values answer 400 saying the cap; 50 are fine', async () => {
    for (const name of ['tag', 'sourceId']) {
      const qs = Array.from({ length: 999 }, (_, i) => `${name}=${name === 'tag' ? `t${i}` : i + 1}`).join('&')
      const res = await designer.get(`/api/takes?${qs}`)
      expect(res.status).toBe(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
      expect(res.body.error.message).toContain(`${name}: at most 50 values of one filter (got 999)`)
    }
    const fifty = Array.from({ length: 50 }, (_, i) => `tag=t${i}`).join('&')
    const ok = await designer.get(`/api/takes?${fifty}`)
    expect(ok.status).toBe(200)
    expect(ok.body.total).toBe(0)
  })
})

describe('nothing is lost', () => {
  it("20 rounds of 3 parallel uploads of identical bytes: one 201 and two 409 each round, every take's audio present and intact", async () => {
    for (let round = 0; round < 20; round++) {
      const file = soxWav(path.join(server.dir, `par-${round}.wav`), {
        seconds: 0.2,
        synth: ['sine', String(200 + round * 37)],
      })
      const answers = await Promise.all([0, 1, 2].map((i) => uploadTake(rec, sessionId, file, `par-${round}-${i}.wav`)))
      const codes = answers.map((a) => a.status).sort()
      expect(codes, `round ${round}`).toEqual([201, 409, 409])
      const won = answers.find((a) => a.status === 201)!.body.take.id
      for (const lost of answers.filter((a) => a.status === 409))
        expect(lost.body.error).toMatchObject({ code: 'DUPLICATE', details: { takeId: won } })
    }
    const rows = await server.ctx.db
      .selectFrom('takes')
      .select(['id', 'audio_path', 'sha256', 'size_bytes'])
      .where('filename', 'like', 'par-%')
      .execute()
    expect(rows).toHaveLength(20)
    for (const r of rows) {
      const p = server.ctx.storage.abs(r.audio_path)
      expect(fs.existsSync(p), `take ${r.id}`).toBe(true)
      expect(sha(p)).toBe(r.sha256)
      expect(fs.statSync(p).size).toBe(r.size_bytes)
    }
    expect(fs.readdirSync(path.join(server.ctx.config.storageDir, 'incoming'))).toEqual([])
  }, 120_000)

  it('an upload cut off at any point (in the part headers, mid-file, just before the closing boundary) leaves no file and no row', async () => {
    const file = soxWav(path.join(server.dir, 'cut.wav'), { seconds: 2, synth: ['sine', '1234'] })
    const boundary = 'sfcut'
    const body = Buffer.concat([
      Buffer.from(
        `--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="cut.wav"\r\nContent-Type: audio/wav\r\n\r\n`,
      ),
      fs.readFileSync(file),
      Buffer.from(`\r\n--${boundary}--\r\n`),
    ])
    const cookie = (await rec.get('/api/auth/me')).request.cookies
    const count = async () =>
      (await server.ctx.db.selectFrom('takes').select('id').where('filename', '=', 'cut.wav').execute()).length
    for (const at of [40, 120, Math.floor(body.length / 2), body.length - 12, body.length - 1]) {
      await new Promise<void>((resolve) => {
        const req = http.request(`${server.url}/api/capture-sessions/${sessionId}/takes`, {
          method: 'POST',
          headers: {
            'content-type': `multipart/form-data; boundary=${boundary}`,
            'content-length': String(body.length),
            'x-csrf-token': rec.token,
            cookie,
          },
        })
        req.on('error', () => resolve())
        req.write(body.subarray(0, at), () => setTimeout(() => (req.destroy(), resolve()), 100))
      })
      await expect
        .poll(() => fs.readdirSync(path.join(server.ctx.config.storageDir, 'incoming')), { timeout: 5000 })
        .toEqual([])
      expect(await count(), `cut at byte ${at} of ${body.length}`).toBe(0)
    }
    const sha256 = sha(file)
    expect(fs.existsSync(server.ctx.storage.abs(server.ctx.storage.audioRelative(sha256)))).toBe(false)
  })

  it('a take that failed for a passing reason is measured again by the uploader; refusals for the rest', async () => {
    const file = soxWav(path.join(server.dir, 'again.wav'), { seconds: 1, synth: ['brownnoise'] })
    const id = (await uploadTake(rec, sessionId, file, 'again.wav')).body.take.id
    expect((await waitForTake(rec, id)).status).toBe('ready')
    const ready = await rec.post(`/api/takes/${id}/measure`)
    expect(ready.status).toBe(409)
    expect(ready.body.error.code).toBe('NOT_FAILED')
    // As a full disk left it: failed, with the words of a passing failure.
    const error = failureText(
      'ENOSPC: no space left on device, write',
      Object.assign(new Error('x'), { code: 'ENOSPC' }),
    )
    expect(error).toMatch(/measuring again may help/)
    await server.ctx.db.updateTable('takes').set({ status: 'failed', error }).where('id', '=', id).execute()
    expect((await (await signedIn(server.url, 'producer')).post(`/api/takes/${id}/measure`)).status).toBe(403)
    expect((await rec.post('/api/takes/999999/measure')).status).toBe(404)
    const again = await rec.post(`/api/takes/${id}/measure`)
    expect(again.status).toBe(202)
    expect(again.body.take).toEqual({ id, status: 'queued' })
    const take = await waitForTake(rec, id)
    expect(take).toMatchObject({ status: 'ready', error: null })
    const history = (await rec.get(`/api/takes/${id}/history`)).body
    expect(JSON.stringify(history)).toContain('Queued for measuring again')
  })

  it('says when measuring again will not help', () => {
    expect(failureText('not a WAVE file', new WavFormatError('not a WAVE file'))).toMatch(/will not help/)
    expect(failureText('gone', Object.assign(new Error('gone'), { code: 'ENOENT' }))).toMatch(
      /only once the audio file is back/,
    )
  })

  it('a missing audio file is refused with FILE_MISSING rather than queued to fail again', async () => {
    const file = soxWav(path.join(server.dir, 'gone.wav'), { seconds: 0.5, synth: ['sine', '777'] })
    const id = (await uploadTake(rec, sessionId, file, 'gone.wav')).body.take.id
    await waitForTake(rec, id)
    const row = await server.ctx.db
      .selectFrom('takes')
      .select('audio_path')
      .where('id', '=', id)
      .executeTakeFirstOrThrow()
    await server.ctx.db.updateTable('takes').set({ status: 'failed', error: 'x' }).where('id', '=', id).execute()
    const moved = server.ctx.storage.abs(row.audio_path) + '.aside'
    fs.renameSync(server.ctx.storage.abs(row.audio_path), moved)
    // Under the scaled suite the bucket holds the file too (locally this is the file just moved aside).
    await server.ctx.storage.blobs.remove(row.audio_path)
    try {
      const res = await designer.post(`/api/takes/${id}/measure`)
      expect(res.status).toBe(409)
      expect(res.body.error.code).toBe('FILE_MISSING')
    } finally {
      fs.renameSync(moved, server.ctx.storage.abs(row.audio_path))
      await server.ctx.storage.persist(row.audio_path)
    }
  })
})
