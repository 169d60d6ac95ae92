// Takes for the pack tests: WAVs made by Debian's sox and ffmpeg (files this
// project did not write), uploaded through the API and measured by the server,
// then given devices and tags straight in the database (the library's own
// editing is tested elsewhere). Not a test file: imported by tests/api/packs-*.test.ts.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import type { Stream } from 'node:stream'
import type { Client } from '../helpers/server'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import type { RunningServer } from '../../server/server'

export interface FixtureTake {
  id: number
  file: string
  durationSeconds: number
}

/** sox synthesis into a WAV of the given format (Debian sox). */
export function soxMake(
  file: string,
  o: { rate: number; bits: number; channels: number; encoding?: 'signed-integer' | 'floating-point' },
  effects: string[],
): string {
  fs.mkdirSync(path.dirname(file), { recursive: true })
  // The rate goes before -n as well: otherwise sox synthesises at its default rate and resamples.
  execFileSync('sox', [
    '-r',
    String(o.rate),
    '-n',
    '-r',
    String(o.rate),
    '-b',
    String(o.bits),
    ...(o.encoding ? ['-e', o.encoding] : []),
    '-c',
    String(o.channels),
    file,
    ...effects,
  ])
  return file
}

export const SIGNALS = {
  /** Pink noise at about −30 LUFS, 48 kHz 24-bit stereo. */
  noise: (f: string, seconds = 4) =>
    soxMake(f, { rate: 48000, bits: 24, channels: 2 }, ['synth', String(seconds), 'pinknoise', 'vol', '-24dB']),
  /** 50 Hz hum with harmonics at 44.1 kHz 16-bit mono. */
  hum: (f: string, seconds = 4) =>
    soxMake(f, { rate: 44100, bits: 16, channels: 1 }, [
      'synth',
      String(seconds),
      'sine',
      '50',
      'synth',
      'sine',
      'mix',
      '150',
      'synth',
      'sine',
      'mix',
      '250',
      'vol',
      '-20dB',
    ]),
  /** A 1 kHz tone, 96 kHz 32-bit float mono. */
  tone: (f: string, seconds = 3) =>
    soxMake(f, { rate: 96000, bits: 32, channels: 1, encoding: 'floating-point' }, [
      'synth',
      String(seconds),
      'sine',
      '1000',
      'vol',
      '-26dB',
    ]),
}

export async function uploadMeasured(
  client: Client,
  sessionId: number,
  file: string,
  name = path.basename(file),
): Promise<FixtureTake> {
  const res = await uploadTake(client, sessionId, file, name)
  if (res.status !== 201) throw new Error(`upload ${name}: ${res.status} ${JSON.stringify(res.body)}`)
  const take = await waitForTake(client, res.body.take.id)
  if (take.status !== 'ready') throw new Error(`take ${name} is ${take.status}: ${take.error}`)
  return { id: take.id, file, durationSeconds: take.format.durationSeconds }
}

/** Links a take to a new source device with a state and sets its tags. */
export async function describeTake(
  server: RunningServer,
  takeId: number,
  o: { device?: string; kind?: string; state?: string; tags?: string[]; title?: string },
) {
  const db = server.ctx.db
  if (o.device) {
    const src = await db
      .insertInto('sources')
      .values({ name: o.device, kind: o.kind ?? 'other' })
      .returning('id')
      .executeTakeFirstOrThrow()
    await db
      .insertInto('take_sources')
      .values({ take_id: takeId, source_id: src.id, state: o.state ?? '' })
      .execute()
  }
  for (const tag of o.tags ?? []) await db.insertInto('take_tags').values({ take_id: takeId, tag }).execute()
  if (o.title !== undefined) await db.updateTable('takes').set({ title: o.title }).where('id', '=', takeId).execute()
}

export async function newSession(client: Client, title = 'Pack source capture') {
  return (await createSession(client, { title })).id
}

/** Polls a build until it is done or failed. */
export async function waitForBuild(client: Client, id: number, timeoutMs = 60_000) {
  const deadline = Date.now() + timeoutMs
  for (;;) {
    const res = await client.get(`/api/pack-builds/${id}`)
    const b = res.body.build
    if (b && (b.status === 'done' || b.status === 'failed')) return b
    if (Date.now() > deadline) throw new Error(`build ${id} still ${b?.status}`)
    await new Promise((r) => setTimeout(r, 100))
  }
}

/** Every file under a folder, recursively (paths relative to it). */
export function filesUnder(dir: string): string[] {
  if (!fs.existsSync(dir)) return []
  return (fs.readdirSync(dir, { recursive: true }) as string[]).filter((f) => fs.statSync(path.join(dir, f)).isFile())
}

/** A superagent parser that keeps a binary body as a Buffer. */
export const binary = (res: Stream, cb: (err: Error | null, body: Buffer) => void) => {
  const parts: Buffer[] = []
  res.on('data', (c: Buffer) => parts.push(c))
  res.on('end', () => cb(null, Buffer.concat(parts)))
}
