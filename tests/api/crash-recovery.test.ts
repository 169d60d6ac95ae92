// kill -9 (issue 9): a server killed while measuring a take, or while building a
// pack, resumes the work at its next start on the same data, with nothing
// half-written and nothing duplicated: one take, one analysis job, one build, a
// zip that Info-ZIP's `unzip -t` passes, no temporary files, SQLite's integrity
// check ok, and no row without its file or file without its row.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import SQLite from 'better-sqlite3'
import { afterAll, describe, expect, it } from 'vitest'
import { signedIn } from '../helpers/server'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { startServerProcess, type ServerProcess } from '../helpers/server-process'
import { filesUnder, soxMake, waitForBuild } from './packs-fixtures'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-crash-'))
const dbFile = path.join(dir, 'db.sqlite')
const storageDir = path.join(dir, 'storage')
let live: ServerProcess | null = null

afterAll(async () => {
  await live?.stop()
  fs.rmSync(dir, { recursive: true, force: true })
})

/** The data at rest: SQLite's integrity check, rows ↔ files, no leftovers of work in progress. */
function consistent() {
  const db = new SQLite(dbFile, { readonly: true })
  try {
    expect(db.pragma('integrity_check', { simple: true })).toBe('ok')
    const takes = db.prepare('SELECT audio_path FROM takes').all() as { audio_path: string }[]
    const audio = filesUnder(path.join(storageDir, 'audio')).map((f) => path.join('audio', f))
    expect(audio.sort()).toEqual(takes.map((t) => t.audio_path).sort())
    const zips = (
      db.prepare('SELECT zip_path FROM pack_builds WHERE zip_path IS NOT NULL').all() as { zip_path: string }[]
    ).map((z) => z.zip_path)
    const built = filesUnder(path.join(storageDir, 'builds'))
      .map((f) => path.join('builds', f))
      .filter((f) => !f.startsWith(path.join('builds', 'previews')))
    expect(built.sort()).toEqual(zips.sort())
    expect(fs.readdirSync(path.join(storageDir, 'incoming'))).toEqual([])
  } finally {
    db.close()
  }
}

const statusOf = (table: 'takes' | 'pack_builds', id: number) => {
  const db = new SQLite(dbFile, { readonly: true })
  try {
    return db.prepare(`SELECT status, progress FROM ${table} WHERE id = ?`).get(id) as {
      status: string
      progress: number
    }
  } finally {
    db.close()
  }
}

async function until(check: () => boolean, what: string, ms = 60_000) {
  const end = Date.now() + ms
  while (!check()) {
    if (Date.now() > end) throw new Error(`timed out waiting: ${what}`)
    await new Promise((r) => setTimeout(r, 20))
  }
}

describe('kill -9', () => {
  it('during measuring: the take is measured after the restart, once, with one job', async () => {
    live = await startServerProcess(dbFile, storageDir)
    const rec = await signedIn(live.url, 'admin')
    const s = await createSession(rec)
    // 3 minutes of 48 kHz 24-bit stereo noise: long enough to be caught measuring.
    const file = soxMake(path.join(dir, 'long.wav'), { rate: 48000, bits: 24, channels: 2 }, [
      'synth',
      '180',
      'pinknoise',
      'vol',
      '-20dB',
    ])
    const res = await uploadTake(rec, s.id, file, 'long.wav')
    expect(res.status).toBe(201)
    const id = res.body.take.id
    await until(
      () => statusOf('takes', id).status === 'analyzing' && statusOf('takes', id).progress > 0,
      'measuring under way',
    )
    await live.kill9()
    live = null
    expect(statusOf('takes', id).status).toBe('analyzing')

    live = await startServerProcess(dbFile, storageDir)
    const again = await signedIn(live.url, 'admin')
    const take = await waitForTake(again, id, 120_000)
    expect(take.status).toBe('ready')
    const db = new SQLite(dbFile, { readonly: true })
    const jobs = db.prepare("SELECT status, attempts FROM jobs WHERE kind = 'analyze-take' AND ref_id = ?").all(id)
    const measured = db
      .prepare("SELECT count(*) AS n FROM take_events WHERE take_id = ? AND kind = 'measured'")
      .get(id) as { n: number }
    db.close()
    expect(jobs).toEqual([{ status: 'done', attempts: 2 }])
    expect(measured.n).toBe(1)
    consistent()
  }, 240_000)

  it('during a pack build: the build finishes after the restart, one build, one zip that unzip -t passes', async () => {
    live ??= await startServerProcess(dbFile, storageDir)
    const designer = await signedIn(live.url, 'designer')
    const admin = await signedIn(live.url, 'admin')
    // 90 s of 48 kHz 24-bit stereo: long enough that the build is caught running.
    const file = soxMake(path.join(dir, 'for-build.wav'), { rate: 48000, bits: 24, channels: 2 }, [
      'synth',
      '90',
      'brownnoise',
      'vol',
      '-20dB',
    ])
    const up = await uploadTake(admin, (await createSession(admin)).id, file, 'for-build.wav')
    const takeId = up.body.take.id
    expect((await waitForTake(admin, takeId, 120_000)).status).toBe('ready')
    const pack = (await designer.post('/api/packs', { name: 'Crash test' })).body.pack
    await designer
      .post(`/api/packs/${pack.id}/items/batch`, { items: [{ takeId }, { takeId, kind: 'loop' }] })
      .expect(201)
    const buildId = (await designer.post(`/api/packs/${pack.id}/builds`).expect(202)).body.build.id
    await until(
      () => statusOf('pack_builds', buildId).status === 'running' && statusOf('pack_builds', buildId).progress > 0,
      'build under way',
    )
    await live.kill9()
    live = null

    live = await startServerProcess(dbFile, storageDir)
    const d2 = await signedIn(live.url, 'designer')
    const b = await waitForBuild(d2, buildId, 180_000)
    expect(b.status).toBe('done')
    const db = new SQLite(dbFile, { readonly: true })
    const builds = db.prepare('SELECT id, zip_path FROM pack_builds WHERE pack_id = ?').all(pack.id) as {
      id: number
      zip_path: string
    }[]
    const jobs = db.prepare("SELECT status FROM jobs WHERE kind = 'build-pack' AND ref_id = ?").all(buildId)
    db.close()
    expect(builds).toHaveLength(1)
    expect(jobs).toEqual([{ status: 'done' }])
    // Info-ZIP's integrity test of every entry.
    execFileSync('unzip', ['-tq', path.join(storageDir, builds[0].zip_path)])
    // The killed build process leaves no orphan behind it.
    expect(
      execFileSync('ps', ['-eo', 'args='], { encoding: 'utf8' })
        .split('\n')
        .filter((l) => l.includes(path.join(storageDir, 'builds'))),
    ).toEqual([])
    consistent()
  }, 300_000)
})
