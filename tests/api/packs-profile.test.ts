// Export profiles over HTTP: the profile set with PATCH /api/packs/:id, names
// previewed and built under its length limit, one folder per source kind, the
// delivered formats read back by Debian's `sox --i`, the folders listed by
// Info-ZIP's `unzip -l`, the manifests recording the profile and the original
// names; items over the profile's length refused, naming the item and its length.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { PackBuild, presetProfile, profileSummary } from '@shared/schemas/packs'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import {
  binary,
  describeTake,
  newSession,
  soxMake,
  SIGNALS,
  uploadMeasured,
  waitForBuild,
  type FixtureTake,
} from './packs-fixtures'

let server: TestServer
let designer: Client
let dir: string
let takes: Record<'noise' | 'hum' | 'stereo96' | 'long', FixtureTake>
let packId: number

const LONG_NAME = 'Laboratory supply switching noise under heavy load'

beforeAll(async () => {
  server = await startTestServer()
  const admin = await signedIn(server.url, 'admin')
  designer = await signedIn(server.url, 'designer')
  dir = path.join(server.dir, 'files')
  const session = await newSession(admin)
  // A 96 kHz 24-bit stereo take (sox: rate before -n, so the noise is made at 96 kHz).
  const stereo96 = path.join(dir, 'stereo96.wav')
  fs.mkdirSync(dir, { recursive: true })
  execFileSync('sox', ['-r', '96000', '-n', '-b', '24', '-c', '2', stereo96, 'synth', '3', 'pinknoise', 'vol', '-20dB'])
  takes = {
    noise: await uploadMeasured(admin, session, SIGNALS.noise(path.join(dir, 'noise.wav'), 3)),
    hum: await uploadMeasured(admin, session, SIGNALS.hum(path.join(dir, 'hum.wav'), 3)),
    stereo96: await uploadMeasured(admin, session, stereo96),
    long: await uploadMeasured(
      admin,
      session,
      soxMake(path.join(dir, 'long.wav'), { rate: 48000, bits: 16, channels: 1 }, ['synth', '21', 'sine', '100']),
    ),
  }
  await describeTake(server, takes.noise.id, {
    device: 'Bench charger',
    kind: 'power-supply',
    state: 'charging',
    tags: ['hiss'],
    title: 'Charger hiss',
  })
  await describeTake(server, takes.hum.id, {
    device: 'Doorbell transformer',
    kind: 'mains-wiring',
    state: 'idle',
    tags: ['hum'],
    title: 'Transformer hum',
  })
  const created = await designer.post('/api/packs', { name: 'Sampler Pack', description: '' })
  packId = created.body.pack.id
  const batch = await designer.post(`/api/packs/${packId}/items/batch`, {
    items: [
      { takeId: takes.noise.id, name: `${LONG_NAME} a` },
      { takeId: takes.noise.id, name: `${LONG_NAME} b`, startSeconds: 0.5, endSeconds: 2 },
      { takeId: takes.hum.id, kind: 'loop', startSeconds: 0.5, endSeconds: 2.5 },
      { takeId: takes.stereo96.id, name: `${LONG_NAME} c` },
    ],
  })
  expect(batch.status).toBe(201)
}, 120_000)

afterAll(async () => {
  await server?.stop()
})

describe('export profiles', () => {
  it('refuses a profile outside the contract with the one error shape', async () => {
    for (const bad of [
      { sampleRate: 22050, channels: 'mono', bitDepth: 16, maxSeconds: null, maxNameLength: 24, layout: 'flat' },
      { sampleRate: 48000, channels: 'both', bitDepth: 16, maxSeconds: null, maxNameLength: 24, layout: 'flat' },
      { sampleRate: 48000, channels: 'mono', bitDepth: 16, maxSeconds: null, maxNameLength: 3, layout: 'flat' },
      { sampleRate: 48000, channels: 'mono', bitDepth: 16, maxSeconds: null, maxNameLength: 24, layout: 'tree' },
    ]) {
      const res = await designer.patch(`/api/packs/${packId}`, { settings: { profile: bad } })
      expect(res.status).toBe(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
    // An item may not carry a profile of its own.
    const items = (await designer.get(`/api/packs/${packId}`)).body.pack.items
    const res = await designer.patch(`/api/packs/${packId}/items/${items[0].id}`, {
      settings: { profile: presetProfile('compact-hardware') },
    })
    expect(res.status).toBe(400)
  })

  it('previews names shortened to a limit, unique, with the full names beside them', async () => {
    const res = await designer.get(
      `/api/packs/${packId}/naming-preview?template=${encodeURIComponent('{device}_{descriptor}_{index}')}&maxNameLength=16&layout=by-kind`,
    )
    expect(res.status).toBe(200)
    const names = res.body.names as { outputName: string; fullName: string; folder: string | null }[]
    expect(names).toHaveLength(4)
    for (const n of names) expect(n.outputName.length).toBeLessThanOrEqual(16)
    expect(new Set(names.map((n) => n.outputName.toLowerCase())).size).toBe(4)
    expect(names[0].fullName).toBe('Laboratory_supply_switching_noise_under_heavy_load_a')
    expect(names.map((n) => n.folder)).toEqual(['power-supply', 'power-supply', 'mains-wiring', 'other'])
  })

  it('builds a by-kind zip of 48 kHz 24-bit files with names within 32 characters, and a manifest of the profile', async () => {
    const profile = { ...presetProfile('desktop-instrument'), channels: 'mono' as const }
    const patched = await designer.patch(`/api/packs/${packId}`, { settings: { profile } })
    expect(patched.status).toBe(200)
    expect(patched.body.pack.settings.profile).toEqual(profile)
    expect(patched.body.pack.settings.bitDepth).toBe(24)
    const req = await designer.post(`/api/packs/${packId}/builds`)
    expect(req.status).toBe(202)
    const build = PackBuild.parse(await waitForBuild(designer, req.body.build.id, 120_000))
    expect(build.status).toBe('done')
    const zip = await designer.get(`/api/pack-builds/${build.id}/download`).buffer(true).parse(binary).expect(200)
    const file = path.join(server.dir, 'profile.zip')
    fs.writeFileSync(file, zip.body)

    // Info-ZIP's unzip -l lists the files inside one folder per source kind.
    const listing = execFileSync('unzip', ['-l', file], { encoding: 'utf8' })
    const entries = listing
      .split('\n')
      .map((l) => l.trim().split(/\s+/).pop()!)
      .filter((n) => n.endsWith('.wav'))
    expect(entries).toHaveLength(4)
    expect(entries.filter((e) => e.startsWith('power-supply/'))).toHaveLength(2)
    expect(entries.filter((e) => e.startsWith('mains-wiring/'))).toHaveLength(1)
    expect(entries.filter((e) => e.startsWith('other/'))).toHaveLength(1)
    for (const e of entries) expect(path.basename(e, '.wav').length).toBeLessThanOrEqual(32)
    expect(new Set(entries.map((e) => path.basename(e).toLowerCase())).size).toBe(4)

    // sox --i (Debian) on every file: 48 kHz, one channel, 24 bits, whatever the take was.
    const out = path.join(server.dir, 'unzipped')
    execFileSync('unzip', ['-q', '-o', file, '-d', out])
    for (const e of entries) {
      const f = path.join(out, e)
      const info = (flag: string) => execFileSync('sox', ['--i', flag, f], { encoding: 'utf8' }).trim()
      expect([info('-r'), info('-c'), info('-b')], e).toEqual(['48000', '1', '24'])
    }

    // manifest.json records the profile; both manifests keep each file's original name.
    const manifest = JSON.parse(fs.readFileSync(path.join(out, 'manifest.json'), 'utf8'))
    expect(manifest.profile).toMatchObject({ ...profile, preset: null, summary: profileSummary(profile) })
    expect(manifest.items.map((i: { file: string }) => i.file).sort()).toEqual([...entries].sort())
    const first = manifest.items[0]
    expect(first.originalName).toBe('Laboratory_supply_switching_noise_under_heavy_load_a.wav')
    expect(first.sourceFile).toBe('noise.wav')
    expect(first.sampleRate).toBe(48000)
    expect(first.channels).toBe(1)
    const csv = fs.readFileSync(path.join(out, 'manifest.csv'), 'utf8')
    expect(csv.split('\r\n')[0]).toContain('originalName,sourceFile')
    expect(csv).toContain('Laboratory_supply_switching_noise_under_heavy_load_a.wav')

    // An item of the build, out of its folder in the zip: the same bytes.
    const pack = (await designer.get(`/api/packs/${packId}`)).body.pack
    const audio = await designer
      .get(`/api/pack-builds/${build.id}/items/${pack.items[2].id}/audio`)
      .buffer(true)
      .parse(binary)
    expect(audio.status).toBe(200)
    const third = manifest.items[2].file
    expect(third.startsWith('mains-wiring/')).toBe(true)
    expect(Buffer.compare(audio.body, fs.readFileSync(path.join(out, third)))).toBe(0)
  })

  it('refuses a build when an item is longer than the profile allows, naming the item and its length', async () => {
    const profile = { ...presetProfile('pocket-sampler'), maxSeconds: 2.5 }
    await designer.patch(`/api/packs/${packId}`, { settings: { profile } })
    const res = await designer.post(`/api/packs/${packId}/builds`)
    expect(res.status).toBe(409)
    expect(res.body.error.code).toBe('ITEM_TOO_LONG')
    expect(res.body.error.message).toMatch(
      /^item 1 \(\w+\) lasts 3\.00 s, longer than the export profile's limit of 2\.5 s$/,
    )
    expect(res.body.error.details).toMatchObject({ seconds: 3, maxSeconds: 2.5 })
  })

  it('quick export offers the presets: a 96 kHz stereo take as 48 kHz 16-bit mono, or refused when too long', async () => {
    const res = await designer
      .get(`/api/takes/${takes.stereo96.id}/export?preset=compact-hardware&start=0&end=1`)
      .buffer(true)
      .parse(binary)
    expect(res.status).toBe(200)
    const f = path.join(server.dir, 'quick.wav')
    fs.writeFileSync(f, res.body)
    const info = (flag: string) => execFileSync('sox', ['--i', flag, f], { encoding: 'utf8' }).trim()
    expect([info('-r'), info('-c'), info('-b')]).toEqual(['48000', '1', '16'])
    const pocket = await designer.get(`/api/takes/${takes.stereo96.id}/export?preset=pocket-sampler`)
    expect(pocket.status).toBe(200)
    const refused = await designer.get(`/api/takes/${takes.long.id}/export?preset=pocket-sampler`)
    expect(refused.status).toBe(400)
    expect(refused.body.error.code).toBe('ITEM_TOO_LONG')
    expect(refused.body.error.message).toMatch(/lasts 21\.00 s, longer than the export profile's limit of 20 s/)
  })
})
