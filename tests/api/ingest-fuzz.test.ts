// Property-based: damaged WAV headers sent to the upload route (fast-check).
// Whatever the bytes, the answer is 201 (a readable file, perhaps recovered) or
// a clear 4xx with the one error shape, never a 5xx or a hang, and nothing is
// left in storage/incoming. Accepted files end ready or failed with a reason.
import fs from 'node:fs'
import path from 'node:path'
import fc from 'fast-check'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { encodeWav } from '../../server/audio/wav-writer'
import { sine } from '../helpers/signals'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let rec: Client
let sessionId: number

beforeAll(async () => {
  server = await startTestServer()
  rec = await signedIn(server.url, 'recordist')
  sessionId = (await createSession(rec)).id
})
afterAll(async () => {
  await server.stop()
})

const base = encodeWav([sine(8000, 0.05, 440, -6), sine(8000, 0.05, 880, -12)], {
  sampleRate: 8000,
  channels: 2,
  encoding: 'pcm',
  bitsPerSample: 16,
  info: { INAM: 'fuzz' },
})

/** One of: overwrite bytes in the first 128 (sizes, ids, format fields), truncate, or append junk. */
const mutation = fc.oneof(
  fc.record({
    kind: fc.constant('poke' as const),
    at: fc.integer({ min: 0, max: 127 }),
    bytes: fc.uint8Array({ minLength: 1, maxLength: 8 }),
  }),
  fc.record({ kind: fc.constant('cut' as const), at: fc.integer({ min: 0, max: base.length }) }),
  fc.record({ kind: fc.constant('tail' as const), bytes: fc.uint8Array({ minLength: 1, maxLength: 64 }) }),
)

type Mutation =
  { kind: 'poke'; at: number; bytes: Uint8Array } | { kind: 'cut'; at: number } | { kind: 'tail'; bytes: Uint8Array }

function apply(b: Buffer, m: Mutation): Buffer {
  if (m.kind === 'poke') {
    const out = Buffer.from(b)
    Buffer.from(m.bytes).copy(out, Math.min(m.at, Math.max(0, out.length - 1)))
    return out
  }
  if (m.kind === 'cut') return b.subarray(0, m.at)
  return Buffer.concat([b, Buffer.from(m.bytes)])
}

describe('upload route under damaged headers', () => {
  it('never answers 5xx, always says what was wrong, never leaves a partial file', async () => {
    const accepted: number[] = []
    let n = 0
    await fc.assert(
      fc.asyncProperty(fc.array(mutation, { minLength: 1, maxLength: 3 }), async (ms) => {
        const bytes = (ms as Mutation[]).reduce(apply, Buffer.from(base))
        // Each case differs in content so the duplicate rule does not hide it.
        const payload = Buffer.concat([bytes, Buffer.from(`#${n++}`)])
        const res = await uploadTake(rec, sessionId, payload, `case-${n}.wav`)
        expect([201, 400, 409, 413, 415]).toContain(res.status)
        if (res.status === 201) accepted.push(res.body.take.id)
        else {
          expect(res.body.error.code).toMatch(/^[A-Z_]+$/)
          expect(res.body.error.message.length).toBeGreaterThan(10)
        }
        expect(fs.readdirSync(path.join(server.ctx.config.storageDir, 'incoming'))).toEqual([])
      }),
      { numRuns: 60, seed: 20261201 },
    )
    for (const id of accepted) {
      const take = await waitForTake(rec, id, 30_000)
      expect(['ready', 'failed']).toContain(take.status)
      if (take.status === 'failed') expect(take.error).toBeTruthy()
    }
  })
})
