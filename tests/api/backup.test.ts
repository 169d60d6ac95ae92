// Backups (issue 9): `npm run backup -- DIR` while uploads run, then
// `npm run restore -- DIR` into a fresh folder; every take of the copy plays
// (its audio route answers) and its audio's SHA-256 matches its row. Both run
// as the commands an operator types, in processes of their own.
import { execFile } from 'node:child_process'
import { createHash } from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { promisify } from 'node:util'
import SQLite from 'better-sqlite3'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { createSession, soxWav, uploadTake } from '../helpers/uploads'

const run = promisify(execFile)
let server: TestServer

beforeAll(async () => {
  server = await startTestServer()
}, 60_000)
afterAll(async () => {
  await server?.stop()
})

const npm = (script: string, dir: string, db: string, storage: string) =>
  run('npm', ['run', '--silent', script, '--', dir], {
    env: { ...process.env, STRAYFIELD_DB: db, STRAYFIELD_STORAGE: storage },
    timeout: 120_000,
  })

describe('backup and restore', () => {
  it('backs up while uploads run; the restored copy is intact, every take plays and matches its SHA-256', async () => {
    const rec = await signedIn(server.url, 'recordist')
    const s = await createSession(rec)
    // Uploads keep coming, two at a time, from before the backup starts until after it ends.
    let backingUp = true
    let uploaded = 0
    let next = 0
    const uploader = async () => {
      while (backingUp || next < 4) {
        const i = next++
        const file = soxWav(path.join(server.dir, 'src', `b${i}.wav`), {
          seconds: 1 + (i % 3),
          synth: ['sine', String(300 + 7 * i)],
        })
        const res = await uploadTake(rec, s.id, file, `b${i}.wav`)
        expect(res.status).toBe(201)
        uploaded++
      }
    }
    const uploads = Promise.all([uploader(), uploader()])
    await expect.poll(() => uploaded, { timeout: 30_000 }).toBeGreaterThan(2)
    const atStart = uploaded
    const dir = path.join(server.dir, 'backup')
    const { dbFile, storageDir } = server.ctx.config
    const out = await npm('backup', dir, dbFile, storageDir).finally(() => (backingUp = false))
    expect(out.stdout).toMatch(/Backed up .* storage files/)
    const atEnd = uploaded
    await uploads
    expect(atEnd).toBeGreaterThan(atStart) // uploads did run while the backup did

    const manifest = JSON.parse(fs.readFileSync(path.join(dir, 'manifest.json'), 'utf8'))
    expect(manifest.missing).toEqual([])

    const fresh = path.join(server.dir, 'restored')
    const restoredDb = path.join(fresh, 'db.sqlite')
    const restoredStorage = path.join(fresh, 'storage')
    await npm('restore', dir, restoredDb, restoredStorage)
    // A second restore onto the same place is refused: restore never overwrites data.
    await expect(npm('restore', dir, restoredDb, restoredStorage)).rejects.toMatchObject({
      stderr: expect.stringContaining('restore into a fresh place'),
    })

    const db = new SQLite(restoredDb, { readonly: true })
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok')
    const rows = db.prepare('SELECT id, audio_path, sha256 FROM takes').all() as {
      id: number
      audio_path: string
      sha256: string
    }[]
    db.close()
    expect(rows.length).toBeGreaterThan(0)
    // No row without its file, no audio file without its row.
    const audioFiles = fs
      .readdirSync(path.join(restoredStorage, 'audio'), { recursive: true })
      .map(String)
      .filter((f) => f.endsWith('.wav'))
    expect(audioFiles.map((f) => path.join('audio', f)).sort()).toEqual(rows.map((r) => r.audio_path).sort())

    const copy = await startTestServer({ dbFile: restoredDb, storageDir: restoredStorage })
    try {
      const designer = await signedIn(copy.url, 'designer')
      for (const r of rows) {
        const res = await designer
          .get(`/api/takes/${r.id}/audio`)
          .buffer(true)
          .parse((resp, cb) => {
            const parts: Buffer[] = []
            resp.on('data', (d: Buffer) => parts.push(d))
            resp.on('end', () => cb(null, Buffer.concat(parts)))
          })
        expect(res.status, `take ${r.id}`).toBe(200)
        expect(
          createHash('sha256')
            .update(res.body as Buffer)
            .digest('hex'),
        ).toBe(r.sha256)
      }
    } finally {
      await copy.stop()
    }
  }, 180_000)

  it('refuses a folder without a finished manifest', async () => {
    const empty = path.join(server.dir, 'not-a-backup')
    fs.mkdirSync(empty)
    await expect(
      npm('restore', empty, path.join(server.dir, 'x.sqlite'), path.join(server.dir, 'x-storage')),
    ).rejects.toMatchObject({
      stderr: expect.stringContaining('holds no manifest.json'),
    })
  }, 60_000)
})
