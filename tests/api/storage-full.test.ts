// A full disk (issue 9): an upload that does not fit answers 507 STORAGE_FULL with
// nothing half-written (no partial file, no row), the database stays intact with
// no row pointing at a missing file and no stored file without its row, and the
// same upload succeeds once space is freed. The disk is a real one: a 6 MiB tmpfs
// mounted for the test (as root). Where mounting is not allowed, the same error
// (ENOSPC) is injected where the upload is written, and the test says so.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let rec: Client
let sessionId: number
let mount: string | null = null
const base = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-full-'))
const disk = path.join(base, 'disk')
const filler = () => path.join(disk, 'filler.bin')

beforeAll(async () => {
  fs.mkdirSync(disk)
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', 'size=6m', 'tmpfs', disk], { stdio: 'pipe' })
    mount = disk
  } catch (err) {
    console.warn(
      `[storage-full] no tmpfs (${String((err as Error).message).split('\n')[0]}); injecting ENOSPC at the upload's write instead`,
    )
  }
  server = await startTestServer({ storageDir: path.join(disk, 'storage') })
  rec = await signedIn(server.url, 'recordist')
  sessionId = (await createSession(rec)).id
}, 60_000)
afterAll(async () => {
  await server?.stop()
  vi.restoreAllMocks()
  if (mount) execFileSync('umount', [mount])
  fs.rmSync(base, { recursive: true, force: true })
})

/** No row without its audio file, no audio file without its row, and SQLite's own check. */
async function consistent() {
  const { db, storage } = server.ctx
  const rows = await db.selectFrom('takes').select(['audio_path']).execute()
  for (const r of rows) expect(fs.existsSync(storage.abs(r.audio_path)), r.audio_path).toBe(true)
  const files = fs
    .readdirSync(path.join(storage.root, 'audio'), { recursive: true })
    .map(String)
    .filter((f) => f.endsWith('.wav'))
  expect(files.map((f) => path.join('audio', f)).sort()).toEqual(rows.map((r) => r.audio_path).sort())
  expect(fs.readdirSync(path.join(storage.root, 'incoming'))).toEqual([])
  const check = await server.ctx.db.selectNoFrom((eb) => eb.val(1).as('x')).execute() // the connection is alive
  expect(check).toHaveLength(1)
  const { rows: integrity } = await (
    await import('kysely')
  ).sql<{ integrity_check: string }>`PRAGMA integrity_check`.execute(server.ctx.db)
  expect(integrity).toEqual([{ integrity_check: 'ok' }])
}

describe('a full disk', () => {
  it('answers 507 STORAGE_FULL, leaves nothing half-written, and recovers once space is freed', async () => {
    const small = soxWav(path.join(base, 'small.wav'), { seconds: 2 }) // about 290 KB
    const big = soxWav(path.join(base, 'big.wav'), { seconds: 30 }) // about 4.3 MB
    expect((await uploadTake(rec, sessionId, small, 'small.wav')).status).toBe(201)

    let restore: (() => void) | null = null
    if (mount) {
      fs.writeFileSync(filler(), Buffer.alloc(3 * 2 ** 20, 1)) // 3 MiB of the 6: the big take cannot fit
    } else {
      const real = fs.createWriteStream
      const spy = vi.spyOn(fs, 'createWriteStream').mockImplementation(((p: fs.PathLike, o?: unknown) => {
        const s = real(p, o as never)
        if (String(p).includes(`${path.sep}incoming${path.sep}`)) {
          s.write = ((_c: unknown, cb?: (e?: Error) => void) => {
            const e = Object.assign(new Error('ENOSPC: no space left on device, write'), { code: 'ENOSPC' })
            process.nextTick(() => (typeof cb === 'function' ? cb(e) : s.destroy(e)))
            return false
          }) as typeof s.write
        }
        return s
      }) as typeof fs.createWriteStream)
      restore = () => spy.mockRestore()
    }

    const full = await uploadTake(rec, sessionId, big, 'big.wav')
    expect(full.status).toBe(507)
    expect(full.body.error.code).toBe('STORAGE_FULL')
    expect(full.body.error.message).toMatch(/no room left/)
    await consistent()

    // Space freed: the same file goes in and is measured.
    if (mount) fs.rmSync(filler())
    restore?.()
    const again = await uploadTake(rec, sessionId, big, 'big.wav')
    expect(again.status).toBe(201)
    expect((await waitForTake(rec, again.body.take.id)).status).toBe('ready')
    await consistent()
  }, 60_000)
})
