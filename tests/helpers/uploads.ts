import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import type { Client } from './server'

/** A WAV made by Debian's sox (a file this project did not write). */
export function soxWav(
  file: string,
  args: { rate?: number; bits?: number; channels?: number; seconds?: number; synth?: string[]; encoding?: string },
): string {
  const { rate = 48000, bits = 24, channels = 1, seconds = 2, synth = ['sine', '1000'], encoding } = args
  fs.mkdirSync(path.dirname(file), { recursive: true })
  // The rate goes before -n as well: otherwise sox synthesises at its default rate and resamples.
  execFileSync('sox', [
    '-r',
    String(rate),
    '-n',
    '-r',
    String(rate),
    '-b',
    String(bits),
    ...(encoding ? ['-e', encoding] : []),
    '-c',
    String(channels),
    file,
    'synth',
    String(seconds),
    ...synth,
    'vol',
    '0.5',
  ])
  return file
}

export async function uploadTake(client: Client, sessionId: number, file: string | Buffer, name = 'take.wav') {
  const req = client.agent.post(`/api/capture-sessions/${sessionId}/takes`).set('x-csrf-token', client.token)
  return typeof file === 'string' ? req.attach('file', file, name) : req.attach('file', file, name)
}

export async function createSession(client: Client, body: Record<string, unknown> = {}) {
  const res = await client.post('/api/capture-sessions', { title: 'Test capture', date: '2026-11-30', ...body })
  if (res.status !== 201) throw new Error(`session: ${res.status} ${JSON.stringify(res.body)}`)
  return res.body.session as { id: number }
}

/** Polls GET /api/takes/:id until the take is ready or failed. */
export async function waitForTake(client: Client, id: number, timeoutMs = 60_000) {
  const deadline = Date.now() + timeoutMs
  for (;;) {
    const res = await client.get(`/api/takes/${id}`)
    const status = res.body.take?.status
    if (status === 'ready' || status === 'failed') return res.body.take
    if (Date.now() > deadline) throw new Error(`take ${id} still ${status}`)
    await new Promise((r) => setTimeout(r, 150))
  }
}
