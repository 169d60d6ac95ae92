// Control curves inside packs: an item's `settings.modulation` (the curve options of a take's
// modulation export) writes a curve file beside the item's audio in each build. Read back by
// independent tools: Info-ZIP's `unzip -l` for the entries, Debian's soxi (sox) for the wav
// control signal, Debian's python3-mido for the Standard MIDI File; both manifests list them.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { PackBuild } from '@shared/schemas/packs'
import { soxi } from '../helpers/audio-files'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { binary, newSession, SIGNALS, uploadMeasured, waitForBuild } from './packs-fixtures'

let server: TestServer
let designer: Client
let packId: number
let itemIds: number[]

const envelopeWav = {
  source: 'envelope',
  format: 'wav',
  attackMs: 5,
  releaseMs: 50,
  rateHz: 500,
  range: { low: 0, high: 1 },
  volts: { low: 0, high: 5 },
}
const envelopeMidi = {
  source: 'envelope',
  format: 'midi',
  attackMs: 5,
  releaseMs: 50,
  rateHz: 100,
  range: { low: 0, high: 127 },
  controller: 74,
  channel: 2,
}

beforeAll(async () => {
  server = await startTestServer()
  const admin = await signedIn(server.url, 'admin')
  designer = await signedIn(server.url, 'designer')
  const dir = path.join(server.dir, 'files')
  fs.mkdirSync(dir, { recursive: true })
  const session = await newSession(admin)
  const noise = await uploadMeasured(admin, session, SIGNALS.noise(path.join(dir, 'noise.wav'), 3))
  const hum = await uploadMeasured(admin, session, SIGNALS.hum(path.join(dir, 'hum.wav'), 3))
  packId = (await designer.post('/api/packs', { name: 'Curve Pack', description: '' })).body.pack.id
  const batch = await designer.post(`/api/packs/${packId}/items/batch`, {
    items: [
      { takeId: noise.id, name: 'charger hiss', startSeconds: 0.5, endSeconds: 2.5 },
      { takeId: hum.id, name: 'transformer hum', settings: { modulation: envelopeMidi } },
      { takeId: hum.id, name: 'plain hum', startSeconds: 1, endSeconds: 2 },
    ],
  })
  expect(batch.status).toBe(201)
  itemIds = (await designer.get(`/api/packs/${packId}`)).body.pack.items.map((i: { id: number }) => i.id)
}, 120_000)

afterAll(async () => {
  await server?.stop()
})

describe('control curves in packs', () => {
  it('keeps an item curve set with PATCH, and refuses invalid curve settings with the one error shape', async () => {
    const ok = await designer.patch(`/api/packs/${packId}/items/${itemIds[0]}`, {
      settings: { modulation: envelopeWav },
    })
    expect(ok.status).toBe(200)
    const items = (await designer.get(`/api/packs/${packId}`)).body.pack.items
    expect(items[0].settings.modulation).toMatchObject({ source: 'envelope', format: 'wav', rateHz: 500 })
    expect(items[1].settings.modulation).toMatchObject({ format: 'midi', controller: 74 })
    expect(items[2].settings).toBeNull()

    for (const bad of [
      { ...envelopeWav, source: 'loudness' },
      { ...envelopeWav, range: { low: 0, high: 5 } }, // a wav spans at most −1…1
      { ...envelopeMidi, rateHz: 2000 }, // MIDI: at most 1000 messages a second
      { ...envelopeMidi, controller: 121 }, // 120–127 are channel mode messages (MIDI 1.0)
      { ...envelopeWav, startSeconds: 1 }, // the item's own range decides
    ]) {
      const res = await designer.patch(`/api/packs/${packId}/items/${itemIds[2]}`, { settings: { modulation: bad } })
      expect(res.status, JSON.stringify(bad)).toBe(400)
      expect(res.body.error.code).toBe('VALIDATION_FAILED')
    }
    const add = await designer.post(`/api/packs/${packId}/items/batch`, {
      items: [{ takeId: items[0].takeId, settings: { modulation: { ...envelopeWav, format: 'mp3' } } }],
    })
    expect(add.status).toBe(400)
    expect((await designer.get(`/api/packs/${packId}`)).body.pack.items).toHaveLength(3)
  })

  it('builds the curves beside the audio: a float wav at the curve rate, a MIDI file with its controller, both in the manifests', async () => {
    const req = await designer.post(`/api/packs/${packId}/builds`)
    expect(req.status).toBe(202)
    const build = PackBuild.parse(await waitForBuild(designer, req.body.build.id, 120_000))
    expect(build.status, build.error ?? '').toBe('done')
    const zip = await designer.get(`/api/pack-builds/${build.id}/download`).buffer(true).parse(binary).expect(200)
    const file = path.join(server.dir, 'curves.zip')
    fs.writeFileSync(file, zip.body)

    // Info-ZIP's unzip -l: each curve beside its item's audio, the plain item alone.
    const entries = execFileSync('unzip', ['-l', file], { encoding: 'utf8' })
      .split('\n')
      .map((l) => l.trim().split(/\s+/).pop()!)
      .filter((n) => /\.(wav|mid|csv)$/.test(n) && n !== 'manifest.csv')
      .sort()
    expect(entries).toEqual([
      'charger_hiss.env.wav',
      'charger_hiss.wav',
      'plain_hum.wav',
      'transformer_hum.env.mid',
      'transformer_hum.wav',
    ])

    const out = path.join(server.dir, 'curves')
    execFileSync('unzip', ['-q', '-o', file, '-d', out])
    // Debian's soxi: mono 32-bit float at the curve's rate, over the item's 2 s range.
    expect(soxi(path.join(out, 'charger_hiss.env.wav'))).toMatchObject({
      rate: 500,
      channels: 1,
      bits: 32,
      encoding: 'Floating Point PCM',
      samples: 1000,
    })
    // Debian's python3-mido: format 0, every control change on controller 74, channel 2 (mido counts from 0),
    // one per point over the whole 3 s take at 100 Hz.
    const script = `
import json, sys, mido
f = mido.MidiFile(sys.argv[1])
cc = [m for m in f if m.type == 'control_change']
print(json.dumps({"type": f.type, "n": len(cc), "controls": sorted({m.control for m in cc}), "channels": sorted({m.channel for m in cc}), "length": f.length}))
`
    const midi = JSON.parse(
      execFileSync('/usr/bin/python3', ['-c', script, path.join(out, 'transformer_hum.env.mid')], {
        encoding: 'utf8',
      }),
    )
    expect(midi).toMatchObject({ type: 0, n: 300, controls: [74], channels: [1] })
    expect(midi.length).toBeCloseTo(3, 2)

    const manifest = JSON.parse(fs.readFileSync(path.join(out, 'manifest.json'), 'utf8'))
    expect(manifest.items[0].modulation).toEqual([
      {
        file: 'charger_hiss.env.wav',
        source: 'envelope',
        format: 'wav',
        rateHz: 500,
        scale: '0..1 = envelope 0..1 of full scale; 0..1 = 0..5 V',
      },
    ])
    expect(manifest.items[1].modulation).toEqual([
      {
        file: 'transformer_hum.env.mid',
        source: 'envelope',
        format: 'midi',
        rateHz: 100,
        scale: 'CC74 ch2 0..127 = envelope 0..1 of full scale',
      },
    ])
    expect(manifest.items[2].modulation).toEqual([])
    const csv = fs.readFileSync(path.join(out, 'manifest.csv'), 'utf8').split('\r\n')
    expect(csv[0].split(',').pop()).toBe('modulation_file')
    expect(csv[1].split(',').pop()).toBe('charger_hiss.env.wav')
    expect(csv[2].split(',').pop()).toBe('transformer_hum.env.mid')
    expect(csv[3].split(',').pop()).toBe('')
  })
})
