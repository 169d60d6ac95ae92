// Issue 9, "metadata parsing is linear": a WAV carrying 1 MiB of iXML, 1 MiB of
// spaces in the bext coding history and 1 MiB of INFO text uploads in under 2 s,
// and /api/health keeps answering in under 200 ms while it is measured (the
// functional limits the issue sets). The server runs in a process of its own, so
// what is timed is the server, not this test's client sharing its event loop.
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, type Client } from '../helpers/server'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'
import { hugeTextWav } from '../helpers/hostile-wav'
import { startServerProcess, type ServerProcess } from '../helpers/server-process'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-freeze-'))
let server: ServerProcess
let rec: Client
let sessionId: number

beforeAll(async () => {
  server = await startServerProcess(path.join(dir, 'db.sqlite'), path.join(dir, 'storage'))
  rec = await signedIn(server.url, 'recordist')
  sessionId = (await createSession(rec)).id
}, 60_000)
afterAll(async () => {
  await server?.stop()
  fs.rmSync(dir, { recursive: true, force: true })
})

/** Asks /api/health back to back until stopped; returns the slowest answer in ms. */
function watchHealth(url: string) {
  let stop = false
  let slowest = 0
  let answers = 0
  const loop = (async () => {
    while (!stop) {
      const t = performance.now()
      const res = await fetch(`${url}/api/health`)
      await res.arrayBuffer()
      slowest = Math.max(slowest, performance.now() - t)
      answers++
      await new Promise((r) => setTimeout(r, 20))
    }
  })()
  return async () => {
    stop = true
    await loop
    return { slowest, answers }
  }
}

describe('nothing freezes', () => {
  // The limits (2 s to upload, 200 ms per health answer) are the functional limits issue 9 sets.
  it('1 MiB of iXML, 1 MiB of coding-history spaces and 1 MiB of INFO text: uploads in under 2 s, /api/health answers under 200 ms while it is measured', async () => {
    const file = path.join(dir, 'hostile.wav')
    fs.writeFileSync(file, hugeTextWav())
    // Warm first (one ordinary take measured, one health answer): what is timed is the hostile file,
    // not the first use of code paths in either process.
    const warm = await uploadTake(rec, sessionId, soxWav(path.join(dir, 'warm.wav'), { seconds: 0.5 }), 'warm.wav')
    await waitForTake(rec, warm.body.take.id)
    await (await fetch(`${server.url}/api/health`)).arrayBuffer()
    const health = watchHealth(server.url)
    const t = performance.now()
    const res = await uploadTake(rec, sessionId, file, 'hostile.wav')
    const uploadMs = performance.now() - t
    expect(res.status).toBe(201)
    expect(uploadMs).toBeLessThan(2000)
    const take = await waitForTake(rec, res.body.take.id)
    const { slowest, answers } = await health()
    expect(answers).toBeGreaterThan(0)
    expect(slowest).toBeLessThan(200)
    expect(take.status).toBe('ready')
    // The labels come from the file once the worker has read it; what was cut is said.
    expect(take.title).toBe('hostile title')
    expect(take.analysis.metadata.ixml.scene).toBe('kept')
    expect(take.analysis.metadata.dropped).toEqual(
      expect.arrayContaining([expect.stringMatching(/^iXML document: \d+ characters, kept the first 65536$/)]),
    )
  })
})
