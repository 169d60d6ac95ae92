// Nothing CPU-heavy runs on the API's event loop: while four spectrograms and a
// pack build run on the audio-task pool (server/work/), /api/health answers in
// under 100 ms at the 99th percentile over 10 s of polling. The server runs in a
// process of its own, so what is timed is the server, not this test's client
// sharing its event loop. The 100 ms bound is our own service target for a
// request that does no work.
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { signedIn, type Client } from '../helpers/server'
import { startServerProcess, type ServerProcess } from '../helpers/server-process'
import { binary, newSession, SIGNALS, soxMake, uploadMeasured } from '../api/packs-fixtures'

const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-audio-work-'))
let server: ServerProcess
let designer: Client
let producer: Client
let shortTake: number
let packId: number

beforeAll(async () => {
  server = await startServerProcess(path.join(dir, 'db.sqlite'), path.join(dir, 'storage'))
  const admin = await signedIn(server.url, 'admin')
  designer = await signedIn(server.url, 'designer')
  producer = await signedIn(server.url, 'producer')
  const session = await newSession(admin)
  shortTake = (await uploadMeasured(admin, session, SIGNALS.noise(path.join(dir, 'noise.wav'), 60))).id
  // Five minutes of 48 kHz 24-bit stereo, six times in the pack: a build of some 500 MB of audio.
  const long = soxMake(path.join(dir, 'long.wav'), { rate: 48000, bits: 24, channels: 2 }, [
    'synth',
    '300',
    'pinknoise',
    'vol',
    '-20dB',
  ])
  const longTake = (await uploadMeasured(admin, session, long)).id
  packId = (await designer.post('/api/packs', { name: 'Busy pack' }).expect(201)).body.pack.id
  await designer
    .post(`/api/packs/${packId}/items/batch`, { items: Array.from({ length: 6 }, () => ({ takeId: longTake })) })
    .expect(201)
}, 300_000)
afterAll(async () => {
  await server?.stop()
  fs.rmSync(dir, { recursive: true, force: true })
})

/** A detailed 30 s excerpt at the largest size, at a start not asked for before (no cached image). */
let nextStart = 0
const excerpt = (c: Client) => {
  const start = (nextStart = (nextStart + 0.37) % 29)
  return c
    .get(
      `/api/takes/${shortTake}/spectrogram.png?start=${start.toFixed(2)}&end=${(start + 30).toFixed(2)}&width=3200&height=512`,
    )
    .buffer(true)
    .parse(binary as never)
}

/** Polls /api/health every 20 ms for `ms`, meanwhile calling `beside` every tenth answer; the latencies, sorted. */
async function pollHealth(ms: number, beside: () => Promise<void> = async () => undefined): Promise<number[]> {
  const latencies: number[] = []
  const until = performance.now() + ms
  while (performance.now() < until) {
    const t = performance.now()
    const res = await fetch(`${server.url}/api/health`)
    await res.arrayBuffer()
    latencies.push(performance.now() - t)
    if (latencies.length % 10 === 0) await beside()
    await new Promise((r) => setTimeout(r, 20))
  }
  return latencies.sort((a, b) => a - b)
}

const p99 = (sorted: number[]) => sorted[Math.ceil(sorted.length * 0.99) - 1]
const summary = (sorted: number[]) =>
  `${sorted.length} answers, p50 ${sorted[sorted.length >> 1].toFixed(1)} ms, p99 ${p99(sorted).toFixed(1)} ms, max ${sorted.at(-1)!.toFixed(1)} ms`

describe('the API thread stays free', () => {
  it('answers /api/health under 100 ms (p99 over 10 s) while four spectrograms and a pack build run', async () => {
    // The same polling with nothing running, printed beside the result: on a machine so loaded that an
    // idle server misses the bound, a failure says so rather than blaming the audio work.
    const idle = await pollHealth(5_000)
    let stop = false
    const statuses: number[] = []
    // Four spectrograms always in flight (two per member: the per-member limit is three).
    const refusals: string[] = []
    const drawing = [designer, designer, producer, producer].map(async (c) => {
      while (!stop) {
        const res = await excerpt(c)
        statuses.push(res.status)
        if (res.status !== 200) refusals.push(`${res.status} ${String(res.body?.toString?.() ?? '').slice(0, 200)}`)
      }
    })
    const buildId = (await designer.post(`/api/packs/${packId}/builds`).expect(202)).body.build.id
    const buildSeen = new Set<string>()
    const busy = await pollHealth(10_000, async () => {
      buildSeen.add((await designer.get(`/api/pack-builds/${buildId}`)).body.build.status)
    })
    stop = true
    await Promise.all(drawing)
    console.log(
      `/api/health idle: ${summary(idle)}\n/api/health busy: ${summary(busy)}; ${statuses.length} spectrograms; build ${[...buildSeen].join(', ')}; load average ${os.loadavg()[0].toFixed(1)}`,
    )
    // The work really ran meanwhile: images were drawn and the build was running.
    expect(statuses.filter((s) => s === 200).length).toBeGreaterThanOrEqual(4)
    expect(refusals).toEqual([])
    expect(buildSeen.has('running')).toBe(true)
    expect(busy.length).toBeGreaterThan(50)
    expect(p99(busy)).toBeLessThan(100)
  }, 120_000)
})
