// Curating packs over HTTP: create and edit packs, add items one at a time and
// many at once, edit, reorder and remove them, audition an item and quick-export
// a range. Signals are made by sox; rendered audio is checked with ffprobe and
// ffmpeg's ebur128 filter (EBU R 128 meter). The generated permission matrix
// (tests/api/permissions.test.ts) covers every 403; here are the allowed flows
// of a designer and what a producer sees.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEFAULT_RENDER_SETTINGS, LICENCE_TEMPLATES, PackDetail, PackItem } from '@shared/schemas/packs'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { ffmpegEbur128 } from '../helpers/reference-tools'
import { binary, describeTake, newSession, SIGNALS, uploadMeasured, type FixtureTake } from './packs-fixtures'

let server: TestServer
let designer: Client
let producer: Client
let recordist: Client
let dir: string
let sessionId: number
let noise: FixtureTake
let hum: FixtureTake
let tone: FixtureTake

beforeAll(async () => {
  server = await startTestServer()
  designer = await signedIn(server.url, 'designer')
  producer = await signedIn(server.url, 'producer')
  recordist = await signedIn(server.url, 'recordist')
  dir = path.join(server.dir, 'files')
  sessionId = await newSession(recordist, 'Workshop bench sweep')
  noise = await uploadMeasured(recordist, sessionId, SIGNALS.noise(path.join(dir, 'noise.wav')))
  hum = await uploadMeasured(recordist, sessionId, SIGNALS.hum(path.join(dir, 'hum.wav')))
  tone = await uploadMeasured(recordist, sessionId, SIGNALS.tone(path.join(dir, 'tone.wav')))
  await describeTake(server, noise.id, {
    device: 'Bench charger',
    state: 'charging',
    tags: ['hiss'],
    title: 'Charger hiss',
  })
  await describeTake(server, hum.id, {
    device: 'Doorbell transformer',
    state: 'idle',
    tags: ['hum'],
    title: 'Transformer hum',
  })
  await describeTake(server, tone.id, { device: 'Desk monitor', state: 'bright', tags: [], title: 'Monitor whine' })
}, 120_000)
afterAll(async () => {
  await server?.stop()
})

const newPack = async (body: object = {}) => {
  const res = await designer.post('/api/packs', { name: 'Test pack', ...body })
  expect(res.status).toBe(201)
  return PackDetail.parse(res.body.pack)
}

describe('packs', () => {
  it('creates a pack with the default settings, naming template and the royalty-free licence text', async () => {
    const pack = await newPack({ name: 'Hums of the bench', description: 'Transformers and chargers' })
    expect(pack).toMatchObject({
      name: 'Hums of the bench',
      description: 'Transformers and chargers',
      namingTemplate: '{device}_{descriptor}_{index}',
      settings: DEFAULT_RENDER_SETTINGS,
      licenceText: LICENCE_TEMPLATES[0].text,
      items: [],
      itemCount: 0,
      latestBuild: null,
      publishedBuild: null,
      following: false,
    })
    expect(pack.createdBy?.name).toEqual(expect.any(String))
    expect((await designer.get(`/api/packs/${pack.id}`).expect(200)).body.pack.id).toBe(pack.id)
    expect((await designer.get('/api/packs').expect(200)).body.packs.map((p: { id: number }) => p.id)).toContain(
      pack.id,
    )
  })

  it('takes a licence template by key, or any edited text', async () => {
    const attribution = await newPack({ licenceTemplate: 'attribution' })
    expect(attribution.licenceText).toBe(LICENCE_TEMPLATES.find((t) => t.key === 'attribution')!.text)
    const own = await newPack({ licenceText: 'Our own words.' })
    expect(own.licenceText).toBe('Our own words.')
  })

  it('edits name, description, licence and template, and merges settings', async () => {
    const pack = await newPack()
    const res = await designer.patch(`/api/packs/${pack.id}`, {
      name: 'Renamed',
      licenceText: 'Team use only, edited.',
      namingTemplate: '{pack}-{index}',
      settings: { bitDepth: 16, loudnessTargetLufs: -23 },
    })
    expect(res.status).toBe(200)
    expect(res.body.pack).toMatchObject({
      name: 'Renamed',
      licenceText: 'Team use only, edited.',
      namingTemplate: '{pack}-{index}',
      settings: { ...DEFAULT_RENDER_SETTINGS, bitDepth: 16, loudnessTargetLufs: -23 },
    })
    const again = await designer.patch(`/api/packs/${pack.id}`, { settings: { normalize: 'peak' } })
    expect(again.body.pack.settings).toMatchObject({ normalize: 'peak', bitDepth: 16, loudnessTargetLufs: -23 })
  })

  it('refuses bad input with 400: empty name, unknown template token, impossible settings', async () => {
    expect((await designer.post('/api/packs', { name: '' })).status).toBe(400)
    const token = await designer.post('/api/packs', { name: 'x', namingTemplate: '{device}_{colour}' })
    expect(token.status).toBe(400)
    expect(token.body.error.message).toMatch(/Unknown token/)
    const pack = await newPack()
    expect((await designer.patch(`/api/packs/${pack.id}`, { settings: { bitDepth: 20 } })).status).toBe(400)
    expect((await designer.patch(`/api/packs/${pack.id}`, { settings: { truePeakCeilingDbtp: 3 } })).status).toBe(400)
    expect((await designer.patch(`/api/packs/${pack.id}`, { colour: 'red' })).status).toBe(400)
  })

  it('deletes a pack (204) and then answers 404; refuses while a build is running (409)', async () => {
    const pack = await newPack()
    expect((await designer.delete(`/api/packs/${pack.id}`)).status).toBe(204)
    const gone = await designer.get(`/api/packs/${pack.id}`)
    expect(gone.status).toBe(404)
    expect(gone.body.error.code).toBe('PACK_NOT_FOUND')
    const busy = await newPack()
    await server.ctx.db
      .insertInto('pack_builds')
      .values({ pack_id: busy.id, version: 1, status: 'running', snapshot_json: '{}', item_count: 0 })
      .execute()
    const refused = await designer.delete(`/api/packs/${busy.id}`)
    expect(refused.status).toBe(409)
    expect(refused.body.error.code).toBe('BUILD_RUNNING')
  })

  it('refuses to build an empty pack (409 PACK_EMPTY)', async () => {
    const pack = await newPack()
    const res = await designer.post(`/api/packs/${pack.id}/builds`)
    expect(res.status).toBe(409)
    expect(res.body.error.code).toBe('PACK_EMPTY')
  })
})

describe('items', () => {
  it('adds a whole take with its numbers from the take’s measurement and a name from the template', async () => {
    const pack = await newPack()
    const res = await designer.post(`/api/packs/${pack.id}/items`, { takeId: hum.id })
    expect(res.status).toBe(201)
    const item = PackItem.parse(res.body.item)
    const take = (await designer.get(`/api/takes/${hum.id}`)).body.take
    expect(item).toMatchObject({
      position: 1,
      takeId: hum.id,
      startSeconds: null,
      endSeconds: null,
      kind: 'one-shot',
      name: null,
      outputName: 'Doorbell_transformer_hum_01',
      fileName: 'Doorbell_transformer_hum_01.wav',
      effectiveSettings: DEFAULT_RENDER_SETTINGS,
      rendered: null,
    })
    expect(item.durationSeconds).toBeCloseTo(hum.durationSeconds, 6)
    expect(item.source.measuredFrom).toBe('take')
    expect(item.source.integratedLufs).toBeCloseTo(take.analysis.loudness.integratedLufs, 2)
    expect(item.source.truePeakDbtp).toBeCloseTo(take.analysis.levels.truePeakDbtp, 2)
    // Before rendering: the gain to −18 LUFS, which the −1 dBTP ceiling allows here.
    expect(item.source.expectedGainDb).toBeCloseTo(-18 - take.analysis.loudness.integratedLufs, 1)
    expect(item.source.expectedUnderTargetDb).toBeNull()
  })

  it('adds a range measured over the range itself (close to ffmpeg ebur128 of the same cut)', async () => {
    const pack = await newPack()
    const res = await designer.post(`/api/packs/${pack.id}/items`, {
      takeId: noise.id,
      startSeconds: 1,
      endSeconds: 3,
      kind: 'loop',
    })
    expect(res.status).toBe(201)
    const item = PackItem.parse(res.body.item)
    expect(item).toMatchObject({ startSeconds: 1, endSeconds: 3, kind: 'loop', durationSeconds: 2 })
    expect(item.source.measuredFrom).toBe('range')
    const cut = path.join(dir, 'cut.wav')
    execFileSync('sox', [noise.file, cut, 'trim', '1', '2'])
    expect(Math.abs(item.source.integratedLufs! - ffmpegEbur128(cut).integratedLufs)).toBeLessThanOrEqual(0.1)
  })

  it('copies the range of a region given by id', async () => {
    const pack = await newPack()
    const region = await designer.post(`/api/takes/${noise.id}/regions`, {
      name: 'clean part',
      startSeconds: 0.5,
      endSeconds: 1.75,
    })
    expect(region.status).toBe(201)
    const res = await designer.post(`/api/packs/${pack.id}/items`, {
      takeId: noise.id,
      regionId: region.body.region.id,
    })
    expect(res.status).toBe(201)
    expect(res.body.item).toMatchObject({ regionId: region.body.region.id, startSeconds: 0.5, endSeconds: 1.75 })
    const wrong = await designer.post(`/api/packs/${pack.id}/items`, {
      takeId: hum.id,
      regionId: region.body.region.id,
    })
    expect(wrong.status).toBe(400)
    expect(wrong.body.error.code).toBe('REGION_NOT_FOUND')
  })

  it('refuses a range outside the take, an empty range, an unknown take and a take not yet measured', async () => {
    const pack = await newPack()
    const past = await designer.post(`/api/packs/${pack.id}/items`, { takeId: hum.id, startSeconds: 1, endSeconds: 99 })
    expect(past.status).toBe(400)
    expect(past.body.error.code).toBe('RANGE_INVALID')
    expect(
      (await designer.post(`/api/packs/${pack.id}/items`, { takeId: hum.id, startSeconds: 2, endSeconds: 1 })).body
        .error.code,
    ).toBe('RANGE_INVALID')
    expect(
      (await designer.post(`/api/packs/${pack.id}/items`, { takeId: hum.id, startSeconds: 50 })).body.error.code,
    ).toBe('RANGE_INVALID')
    // Shorter than 20 ms (MIN_SELECTION_SECONDS, common practice for the shortest one-shot): refused by the schema,
    // and by the service when one end is the take's own.
    const tick = await designer.post(`/api/packs/${pack.id}/items`, {
      takeId: hum.id,
      startSeconds: 1,
      endSeconds: 1.01,
    })
    expect(tick.status).toBe(400)
    expect(tick.body.error).toMatchObject({ code: 'VALIDATION_FAILED' })
    expect(tick.body.error.message).toContain('at least 20 ms')
    const tail = await designer.post(`/api/packs/${pack.id}/items`, {
      takeId: hum.id,
      startSeconds: hum.durationSeconds - 0.01,
    })
    expect(tail.status).toBe(400)
    expect(tail.body.error.code).toBe('RANGE_INVALID')
    const unknown = await designer.post(`/api/packs/${pack.id}/items`, { takeId: 999999 })
    expect(unknown.status).toBe(404)
    expect(unknown.body.error.code).toBe('TAKE_NOT_FOUND')
    const queued = await server.ctx.db
      .insertInto('takes')
      .values({
        session_id: sessionId,
        filename: 'late.wav',
        audio_path: 'audio/zz/late.wav',
        size_bytes: 1,
        sha256: 'f'.repeat(64),
        status: 'queued',
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    const notReady = await designer.post(`/api/packs/${pack.id}/items`, { takeId: queued.id })
    expect(notReady.status).toBe(409)
    expect(notReady.body.error.code).toBe('TAKE_NOT_READY')
    expect((await designer.get(`/api/packs/${pack.id}`)).body.pack.items).toEqual([])
  })

  it('adds many at once in order, all or none', async () => {
    const pack = await newPack()
    const res = await designer.post(`/api/packs/${pack.id}/items/batch`, {
      items: [
        { takeId: noise.id },
        { takeId: hum.id, startSeconds: 0.25, endSeconds: 2 },
        { takeId: tone.id, kind: 'loop' },
      ],
    })
    expect(res.status).toBe(201)
    expect(res.body.items.map((i: PackItem) => [i.position, i.takeId])).toEqual([
      [1, noise.id],
      [2, hum.id],
      [3, tone.id],
    ])
    // {descriptor} falls back to the first title word when a take has no tags.
    expect(res.body.items.map((i: PackItem) => i.outputName)).toEqual([
      'Bench_charger_hiss_01',
      'Doorbell_transformer_hum_02',
      'Desk_monitor_Monitor_03',
    ])
    const bad = await designer.post(`/api/packs/${pack.id}/items/batch`, {
      items: [{ takeId: noise.id }, { takeId: hum.id, startSeconds: 0, endSeconds: 60 }],
    })
    expect(bad.status).toBe(400)
    expect(bad.body.error.message).toMatch(/^items\.1: /)
    const after = PackDetail.parse((await designer.get(`/api/packs/${pack.id}`)).body.pack)
    expect(after.itemCount).toBe(3)
    expect(after.totalDurationSeconds).toBeCloseTo(noise.durationSeconds + 1.75 + tone.durationSeconds, 6)
  })

  it('edits an item: explicit names are sanitised and made unique, kind and settings override, range re-measured', async () => {
    const pack = await newPack()
    const { items } = (
      await designer.post(`/api/packs/${pack.id}/items/batch`, { items: [{ takeId: noise.id }, { takeId: hum.id }] })
    ).body
    const a = await designer.patch(`/api/packs/${pack.id}/items/${items[0].id}`, { name: 'Crème brûlée / hiss' })
    expect(a.status).toBe(200)
    expect(a.body.item.outputName).toBe('Creme_brulee_hiss')
    const b = await designer.patch(`/api/packs/${pack.id}/items/${items[1].id}`, {
      name: 'creme BRULEE hiss',
      kind: 'loop',
      settings: { bitDepth: 32, loudnessTargetLufs: -20 },
    })
    expect(b.body.item).toMatchObject({
      outputName: 'creme_BRULEE_hiss_2',
      kind: 'loop',
      settings: { bitDepth: 32, loudnessTargetLufs: -20 },
      effectiveSettings: { ...DEFAULT_RENDER_SETTINGS, bitDepth: 32, loudnessTargetLufs: -20 },
    })
    const c = await designer.patch(`/api/packs/${pack.id}/items/${items[1].id}`, {
      startSeconds: 1,
      endSeconds: 2,
      name: null,
      settings: null,
    })
    expect(c.body.item).toMatchObject({
      startSeconds: 1,
      endSeconds: 2,
      name: null,
      outputName: 'Doorbell_transformer_hum_02',
      settings: null,
    })
    expect(c.body.item.source.measuredFrom).toBe('range')
    expect((await designer.patch(`/api/packs/${pack.id}/items/${items[1].id}`, { endSeconds: 500 })).status).toBe(400)
    const tick = await designer.patch(`/api/packs/${pack.id}/items/${items[1].id}`, {
      startSeconds: 1,
      endSeconds: 1.01,
    })
    expect(tick.status).toBe(400)
    expect(tick.body.error.message).toContain('at least 20 ms')
    expect((await designer.patch(`/api/packs/${pack.id}/items/999999`, { name: 'x' })).status).toBe(404)
  })

  it('reorders with PUT …/items/order (every id once) and renumbers {index}', async () => {
    const pack = await newPack()
    const { items } = (
      await designer.post(`/api/packs/${pack.id}/items/batch`, {
        items: [{ takeId: noise.id }, { takeId: hum.id }, { takeId: tone.id }],
      })
    ).body
    const ids = items.map((i: PackItem) => i.id)
    const res = await designer.put(`/api/packs/${pack.id}/items/order`, { itemIds: [ids[2], ids[0], ids[1]] })
    expect(res.status).toBe(200)
    expect(res.body.items.map((i: PackItem) => [i.id, i.position, i.outputName])).toEqual([
      [ids[2], 1, 'Desk_monitor_Monitor_01'],
      [ids[0], 2, 'Bench_charger_hiss_02'],
      [ids[1], 3, 'Doorbell_transformer_hum_03'],
    ])
    const missing = await designer.put(`/api/packs/${pack.id}/items/order`, { itemIds: [ids[0], ids[1]] })
    expect(missing.status).toBe(400)
    expect(missing.body.error).toMatchObject({ code: 'ORDER_INVALID', details: { missing: [ids[2]], unknown: [] } })
    expect(
      (await designer.put(`/api/packs/${pack.id}/items/order`, { itemIds: [ids[0], ids[0], ids[1], ids[2]] })).status,
    ).toBe(400)
  })

  it('removes an item (204) and closes the gap in the order', async () => {
    const pack = await newPack()
    const { items } = (
      await designer.post(`/api/packs/${pack.id}/items/batch`, {
        items: [{ takeId: noise.id }, { takeId: hum.id }, { takeId: tone.id }],
      })
    ).body
    expect((await designer.delete(`/api/packs/${pack.id}/items/${items[1].id}`)).status).toBe(204)
    const after = (await designer.get(`/api/packs/${pack.id}`)).body.pack.items
    expect(after.map((i: PackItem) => [i.id, i.position])).toEqual([
      [items[0].id, 1],
      [items[2].id, 2],
    ])
    expect((await designer.delete(`/api/packs/${pack.id}/items/${items[1].id}`)).status).toBe(404)
  })
})

describe('audition and quick export', () => {
  it('streams an item rendered as it will be built, with Range support for the player', async () => {
    const pack = await newPack({ settings: { bitDepth: 16 } })
    const item = (
      await designer.post(`/api/packs/${pack.id}/items`, { takeId: noise.id, startSeconds: 0.5, endSeconds: 2.5 })
    ).body.item
    const res = await designer.get(`/api/packs/${pack.id}/items/${item.id}/preview`).buffer(true).parse(binary)
    expect(res.status).toBe(200)
    expect(res.headers['content-type']).toBe('audio/wav')
    expect(res.headers['accept-ranges']).toBe('bytes')
    const file = path.join(dir, 'preview.wav')
    fs.writeFileSync(file, res.body)
    const probe = JSON.parse(
      execFileSync('ffprobe', ['-v', 'error', '-show_streams', '-of', 'json', file], { encoding: 'utf8' }),
    ).streams[0]
    expect(probe.codec_name).toBe('pcm_s16le')
    expect(Number(probe.duration)).toBeCloseTo(2, 6)
    expect(Math.abs(ffmpegEbur128(file).integratedLufs - -18)).toBeLessThanOrEqual(0.2)
    const head = await designer
      .get(`/api/packs/${pack.id}/items/${item.id}/preview`)
      .set('Range', 'bytes=0-11')
      .buffer(true)
      .parse(binary)
    expect(head.status).toBe(206)
    expect(head.body.toString('latin1')).toBe(res.body.subarray(0, 12).toString('latin1'))
  })

  it('exports a range of a take as one WAV attachment with the default settings, or a pack’s, any field overridden', async () => {
    const res = await designer
      .get(`/api/takes/${hum.id}/export?start=0.5&end=1.5&bitDepth=16`)
      .buffer(true)
      .parse(binary)
    expect(res.status).toBe(200)
    expect(res.headers['content-disposition']).toMatch(/^attachment; filename="?Doorbell_transformer_hum_01\.wav"?$/)
    const file = path.join(dir, 'export.wav')
    fs.writeFileSync(file, res.body)
    const probe = JSON.parse(
      execFileSync('ffprobe', ['-v', 'error', '-show_streams', '-of', 'json', file], { encoding: 'utf8' }),
    ).streams[0]
    expect(probe.codec_name).toBe('pcm_s16le')
    expect(Number(probe.sample_rate)).toBe(44100)
    expect(Number(probe.duration)).toBeCloseTo(1, 6)
    expect(Math.abs(ffmpegEbur128(file).integratedLufs - -18)).toBeLessThanOrEqual(0.2)

    const pack = await newPack({ namingTemplate: '{title}', settings: { loudnessTargetLufs: -24, bitDepth: 32 } })
    const withPack = await designer
      .get(`/api/takes/${tone.id}/export?packId=${pack.id}&name=Whine%20sample`)
      .buffer(true)
      .parse(binary)
    expect(withPack.status).toBe(200)
    expect(withPack.headers['content-disposition']).toMatch(/filename="?Whine_sample\.wav"?/)
    const f2 = path.join(dir, 'export2.wav')
    fs.writeFileSync(f2, withPack.body)
    expect(
      JSON.parse(execFileSync('ffprobe', ['-v', 'error', '-show_streams', '-of', 'json', f2], { encoding: 'utf8' }))
        .streams[0].codec_name,
    ).toBe('pcm_f32le')
    expect(Math.abs(ffmpegEbur128(f2).integratedLufs - -24)).toBeLessThanOrEqual(0.2)

    expect((await designer.get(`/api/takes/${hum.id}/export?start=3&end=1`)).status).toBe(400)
    const tick = await designer.get(`/api/takes/${hum.id}/export?start=1&end=1.01`)
    expect(tick.status).toBe(400)
    expect(tick.body.error.message).toContain('at least 20 ms')
    expect((await designer.get(`/api/takes/${hum.id}/export?bitDepth=12`)).status).toBe(400)
  })
})

describe('what a producer sees', () => {
  it('lists no unpublished pack and gets 404 for one, its items’ previews and its builds', async () => {
    const pack = await newPack()
    const item = (await designer.post(`/api/packs/${pack.id}/items`, { takeId: hum.id })).body.item
    expect((await producer.get('/api/packs').expect(200)).body.packs.map((p: { id: number }) => p.id)).not.toContain(
      pack.id,
    )
    expect((await producer.get(`/api/packs/${pack.id}`)).status).toBe(404)
    expect((await producer.get(`/api/packs/${pack.id}/builds`)).status).toBe(404)
    expect((await producer.get(`/api/packs/${pack.id}/items/${item.id}/preview`)).status).toBe(404)
    expect((await producer.post(`/api/packs/${pack.id}/follow`)).status).toBe(404)
  })
})
