// Producers and share recipients see only what was published (issue 9), and the
// delivery of single items, region names and "what changed" notes (issue 10).
// A draft is edited after publishing; everything a producer or a share visitor
// gets must still be the published build: its name, description, licence, items
// and audio. Single items are compared byte for byte with the files Info-ZIP
// unzip takes out of the downloaded zip; bext is read back by ffprobe (Debian
// ffmpeg), manifest.csv by Python's csv module. Mail arrives at a test SMTP server.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { BuildChanges, PackBuild, PackDetail, ShareInfo } from '@shared/schemas/packs'
import { Client, signedIn, startTestServer, type TestServer } from '../helpers/server'
import { startTestSmtp } from '../helpers/smtp'
import {
  binary,
  describeTake,
  newSession,
  SIGNALS,
  uploadMeasured,
  waitForBuild,
  type FixtureTake,
} from './packs-fixtures'

let smtp: Awaited<ReturnType<typeof startTestSmtp>>
let server: TestServer
let designer: Client
let producer: Client
let anon: Client
let hum: FixtureTake
let noise: FixtureTake
let regionId: number
let packId: number
let v1: PackBuild
let v1Dir: string
let hiddenItemId: number

const inADay = () => new Date(Date.now() + 864e5).toISOString()
const unzipTo = (zip: Buffer, name: string) => {
  const file = path.join(server.dir, `${name}.zip`)
  fs.writeFileSync(file, zip)
  const out = path.join(server.dir, name)
  execFileSync('unzip', ['-q', '-o', file, '-d', out])
  return out
}
const getBinary = (c: Client, url: string, range?: string) => {
  const req = c.get(url)
  if (range) req.set('Range', range)
  return req.buffer(true).parse(binary)
}

beforeAll(async () => {
  smtp = await startTestSmtp()
  server = await startTestServer({ smtpUrl: smtp.url, mailCatcher: false })
  designer = await signedIn(server.url, 'designer')
  producer = await signedIn(server.url, 'producer')
  anon = new Client(server.url)
  const admin = await signedIn(server.url, 'admin')
  const session = await newSession(admin, 'Delivery bench')
  hum = await uploadMeasured(admin, session, SIGNALS.hum(path.join(server.dir, 'hum.wav'), 2))
  noise = await uploadMeasured(admin, session, SIGNALS.noise(path.join(server.dir, 'noise.wav'), 3))
  await describeTake(server, hum.id, { device: 'Doorbell transformer', state: 'idle', tags: ['hum'] })
  await describeTake(server, noise.id, { device: 'Bench charger', state: 'charging', tags: ['hiss'] })
  regionId = (
    await designer
      .post(`/api/takes/${noise.id}/regions`, { name: 'Switch burst', startSeconds: 0.5, endSeconds: 1.5 })
      .expect(201)
  ).body.region.id

  const pack = (
    await designer
      .post('/api/packs', {
        name: 'Published hums',
        description: 'The published words',
        licenceText: 'Published licence words.',
      })
      .expect(201)
  ).body.pack
  packId = pack.id
  await designer
    .post(`/api/packs/${packId}/items/batch`, { items: [{ takeId: hum.id }, { takeId: noise.id, regionId }] })
    .expect(201)
  v1 = PackBuild.parse(
    await waitForBuild(designer, (await designer.post(`/api/packs/${packId}/builds`).expect(202)).body.build.id),
  )
  // Nobody without packs:manage can follow a pack before its first version; the admin can.
  await admin.post(`/api/packs/${packId}/follow`).expect(200)
  v1Dir = unzipTo((await getBinary(designer, `/api/pack-builds/${v1.id}/download`).expect(200)).body, 'v1')
}, 120_000)

afterAll(async () => {
  await server?.stop()
  await smtp?.close()
})

describe('region names', () => {
  it('name the item by the default template, and go into the bext description and the manifest (regionName)', async () => {
    const detail = PackDetail.parse((await designer.get(`/api/packs/${packId}`).expect(200)).body.pack)
    expect(detail.items.map((i) => [i.fileName, i.regionName])).toEqual([
      ['Doorbell_transformer_hum_01.wav', null],
      ['Bench_charger_Switch_burst_02.wav', 'Switch burst'],
    ])
    const manifest = JSON.parse(fs.readFileSync(path.join(v1Dir, 'manifest.json'), 'utf8'))
    expect(manifest.items.map((i: { regionName: string | null }) => i.regionName)).toEqual([null, 'Switch burst'])
    // manifest.csv read by Python's csv module (RFC 4180 dialect).
    const csv = JSON.parse(
      execFileSync(
        'python3',
        [
          '-c',
          'import csv, json, sys; print(json.dumps(list(csv.DictReader(open(sys.argv[1], newline="")))))',
          path.join(v1Dir, 'manifest.csv'),
        ],
        { encoding: 'utf8' },
      ),
    )
    expect(csv.map((r: { regionName: string }) => r.regionName)).toEqual(['', 'Switch burst'])
    // bext description as ffprobe reports it (ffmpeg's WAV demuxer shows it as the "comment" tag).
    const probe = JSON.parse(
      execFileSync(
        'ffprobe',
        ['-v', 'error', '-show_format', '-of', 'json', path.join(v1Dir, 'Bench_charger_Switch_burst_02.wav')],
        { encoding: 'utf8' },
      ),
    )
    expect(probe.format.tags.comment).toContain('Region: Switch burst')
  })

  it('previews the output names of a typed template, and refuses an unknown token', async () => {
    const res = await designer
      .get(`/api/packs/${packId}/naming-preview`)
      .query({ template: '{region}-{take}' })
      .expect(200)
    expect(res.body.names.map((n: { fileName: string }) => n.fileName)).toEqual([
      `${hum.id}.wav`,
      `Switch_burst-${noise.id}.wav`,
    ])
    const bad = await designer.get(`/api/packs/${packId}/naming-preview`).query({ template: '{colour}' })
    expect(bad.status).toBe(400)
    expect(bad.body.error.code).toBe('VALIDATION_FAILED')
    expect((await designer.get('/api/packs/999999/naming-preview').query({ template: '{take}' })).status).toBe(404)
  })

  it('refuses a region of another take, even with the range given', async () => {
    const res = await designer.post(`/api/packs/${packId}/items`, {
      takeId: hum.id,
      regionId,
      startSeconds: 0,
      endSeconds: 1,
    })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('REGION_NOT_FOUND')
  })
})

describe('publishing with a "what changed" note', () => {
  it('computes the first version, publishes with the typed note and mails it to followers', async () => {
    const changes = BuildChanges.parse(
      (await designer.get(`/api/pack-builds/${v1.id}/changes`).expect(200)).body.changes,
    )
    expect(changes).toMatchObject({
      sinceVersion: null,
      added: ['Doorbell_transformer_hum_01.wav', 'Bench_charger_Switch_burst_02.wav'],
    })
    expect(changes.text).toBe('First published version: 2 items.\n\n')
    const pub = await designer
      .post(`/api/pack-builds/${v1.id}/publish`, { note: 'Two first sounds: a doorbell hum and a charger burst.' })
      .expect(200)
    expect(pub.body.build.changeNote).toBe('Two first sounds: a doorbell hum and a charger burst.')
    const mail = await smtp.waitFor('admin@example.test')
    expect(mail.text).toContain('What changed in version 1:\nTwo first sounds: a doorbell hum and a charger burst.')
  })

  it('lists items added, removed, renamed and re-rendered since the last published version', async () => {
    const items = PackDetail.parse((await designer.get(`/api/packs/${packId}`).expect(200)).body.pack).items
    await designer.patch(`/api/packs/${packId}/items/${items[0].id}`, { name: 'Doorbell low hum' }).expect(200)
    await designer.patch(`/api/packs/${packId}/items/${items[1].id}`, { kind: 'loop' }).expect(200)
    const added = (
      await designer
        .post(`/api/packs/${packId}/items`, { takeId: noise.id, startSeconds: 2, endSeconds: 2.8 })
        .expect(201)
    ).body.item
    hiddenItemId = added.id
    const v2 = await waitForBuild(
      designer,
      (await designer.post(`/api/packs/${packId}/builds`).expect(202)).body.build.id,
    )
    const changes = BuildChanges.parse(
      (await designer.get(`/api/pack-builds/${v2.id}/changes`).expect(200)).body.changes,
    )
    expect(changes.sinceVersion).toBe(1)
    expect(changes.added).toEqual([added.fileName])
    expect(changes.removed).toEqual([])
    expect(changes.renamed).toEqual([{ from: 'Doorbell_transformer_hum_01.wav', to: 'Doorbell_low_hum.wav' }])
    expect(changes.rerendered).toEqual(['Bench_charger_Switch_burst_02.wav'])
    expect(changes.text.trimEnd().split('\n')).toEqual([
      `Added: ${added.fileName}`,
      'Renamed: Doorbell_transformer_hum_01.wav → Doorbell_low_hum.wav',
      'Re-rendered: Bench_charger_Switch_burst_02.wav',
    ])
    expect((await designer.get('/api/pack-builds/999999/changes')).status).toBe(404)
  })
})

describe('producers see only what was published', () => {
  it('get the published name, description, licence and items after the draft is edited (v2 built, not published)', async () => {
    await designer
      .patch(`/api/packs/${packId}`, { name: 'Draft name', description: 'Draft words', licenceText: 'Draft licence.' })
      .expect(200)
    const seen = PackDetail.parse((await producer.get(`/api/packs/${packId}`).expect(200)).body.pack)
    expect(seen).toMatchObject({
      name: 'Published hums',
      description: 'The published words',
      licenceText: 'Published licence words.',
      itemCount: 2,
    })
    expect(seen.items.map((i) => i.fileName)).toEqual([
      'Doorbell_transformer_hum_01.wav',
      'Bench_charger_Switch_burst_02.wav',
    ])
    expect(seen.items.map((i) => i.kind)).toEqual(['one-shot', 'one-shot'])
    expect(seen.items.every((i) => i.rendered?.version === 1)).toBe(true)
    expect(seen.publishedBuild?.changeNote).toBe('Two first sounds: a doorbell hum and a charger burst.')
    const listed = (await producer.get('/api/packs').expect(200)).body.packs.find(
      (p: { id: number }) => p.id === packId,
    )
    expect(listed).toMatchObject({
      name: 'Published hums',
      description: 'The published words',
      licenceText: 'Published licence words.',
      itemCount: 2,
    })
    const builds = (await producer.get(`/api/packs/${packId}/builds`).expect(200)).body.builds
    expect(builds.map((b: PackBuild) => [b.version, b.packName])).toEqual([[1, 'Published hums']])
    // The designer sees the draft.
    expect((await designer.get(`/api/packs/${packId}`)).body.pack.name).toBe('Draft name')
  })

  it('hear the published render only: no preview of an item that is in no published build', async () => {
    const res = await producer.get(`/api/packs/${packId}/items/${hiddenItemId}/preview`)
    expect(res.status).toBe(404)
    const seen = PackDetail.parse((await producer.get(`/api/packs/${packId}`).expect(200)).body.pack)
    // The first item was renamed in the draft; the producer still hears v1's file, byte for byte.
    const heard = await getBinary(producer, `/api/packs/${packId}/items/${seen.items[0].id}/preview`).expect(200)
    expect(heard.body.equals(fs.readFileSync(path.join(v1Dir, 'Doorbell_transformer_hum_01.wav')))).toBe(true)
  })

  it('download one item of a published build, its bytes as in the zip, with ranges', async () => {
    const url = `/api/pack-builds/${v1.id}/items`
    const items = PackDetail.parse((await producer.get(`/api/packs/${packId}`)).body.pack).items
    const inZip = fs.readFileSync(path.join(v1Dir, 'Bench_charger_Switch_burst_02.wav'))
    const res = await getBinary(producer, `${url}/${items[1].id}/download`).expect(200)
    expect(res.headers['content-disposition']).toBe('attachment; filename="Bench_charger_Switch_burst_02.wav"')
    expect(res.headers['content-type']).toBe('audio/wav')
    expect(Number(res.headers['content-length'])).toBe(inZip.length)
    expect(res.body.equals(inZip)).toBe(true)
    // RFC 9110 §14: a range is relative to the item, not the zip.
    const part = await getBinary(producer, `${url}/${items[1].id}/download`, 'bytes=0-11').expect(206)
    expect(part.headers['content-range']).toBe(`bytes 0-11/${inZip.length}`)
    expect(part.body.toString('latin1')).toBe(inZip.subarray(0, 12).toString('latin1'))
    expect(part.body.subarray(8, 12).toString('latin1')).toBe('WAVE')
    const past = await producer.get(`${url}/${items[1].id}/download`).set('Range', `bytes=${inZip.length + 5}-`)
    expect(past.status).toBe(416)
    expect(past.headers['content-range']).toBe(`bytes */${inZip.length}`)
    expect((await producer.get(`${url}/${hiddenItemId}/download`)).status).toBe(404)
    expect((await producer.get(`${url}/999999/download`)).status).toBe(404)
  })

  it('get 404 for the items of an unpublished build', async () => {
    const v2 = (await designer.get(`/api/packs/${packId}/builds`)).body.builds[0]
    expect(v2.version).toBe(2)
    expect((await producer.get(`/api/pack-builds/${v2.id}/items/${hiddenItemId}/download`)).status).toBe(404)
    expect((await designer.get(`/api/pack-builds/${v2.id}/items/${hiddenItemId}/download`)).status).toBe(200)
  })
})

describe('share links', () => {
  it('show the published items, and the licence that is in the zip’s LICENSE.txt', async () => {
    const link = (
      await designer.post(`/api/pack-builds/${v1.id}/share-links`, { expiresAt: inADay(), maxDownloads: 1 }).expect(201)
    ).body.link
    const info = ShareInfo.parse((await anon.get(`/api/share/${link.token}`).expect(200)).body.share)
    expect(info).toMatchObject({
      packName: 'Published hums',
      description: 'The published words',
      licenceText: 'Published licence words.',
      itemCount: 2,
    })
    expect(fs.readFileSync(path.join(v1Dir, 'LICENSE.txt'), 'utf8')).toContain(info.licenceText)
    expect(info.changeNote).toBe('Two first sounds: a doorbell hum and a charger burst.')
    expect(info.items.map((i) => [i.position, i.fileName, i.regionName])).toEqual([
      [1, 'Doorbell_transformer_hum_01.wav', null],
      [2, 'Bench_charger_Switch_burst_02.wav', 'Switch burst'],
    ])

    // Each item plays and downloads alone, as in the zip, and never counts against the link's limit of one.
    for (const item of info.items) {
      const inZip = fs.readFileSync(path.join(v1Dir, item.fileName))
      const audio = await getBinary(anon, item.auditionUrl).expect(200)
      expect(audio.headers['content-disposition']).toContain('inline')
      expect(audio.body.equals(inZip)).toBe(true)
      const dl = await getBinary(anon, item.downloadUrl).expect(200)
      expect(dl.body.equals(inZip)).toBe(true)
      expect(item.sizeBytes).toBe(inZip.length)
    }
    const links = (await designer.get(`/api/pack-builds/${v1.id}/share-links`)).body.links
    expect(links.find((l: { id: number }) => l.id === link.id).downloads).toBe(0)
    // The whole zip counts; after it the link is used up, for single items too.
    await getBinary(anon, info.downloadUrl).expect(200)
    expect((await anon.get(info.items[0].downloadUrl)).status).toBe(410)
  })

  it('answer 404 for an item the build does not hold, and for a made-up token', async () => {
    const link = (await designer.post(`/api/pack-builds/${v1.id}/share-links`, { expiresAt: inADay() }).expect(201))
      .body.link
    expect((await anon.get(`/api/share/${link.token}/items/${hiddenItemId}/download`)).status).toBe(404)
    expect((await anon.get(`/api/share/${link.token}/items/999999/audio`)).status).toBe(404)
    expect((await anon.get(`/api/share/${'x'.repeat(43)}/items/1/download`)).status).toBe(404)
  })

  it('answer FILE_MISSING without a server path when the zip is gone', async () => {
    const link = (await designer.post(`/api/pack-builds/${v1.id}/share-links`, { expiresAt: inADay() }).expect(201))
      .body.link
    const row = await server.ctx.db
      .selectFrom('pack_builds')
      .select('zip_path')
      .where('id', '=', v1.id)
      .executeTakeFirstOrThrow()
    const zip = server.ctx.storage.abs(row.zip_path!)
    fs.renameSync(zip, `${zip}.away`)
    await server.ctx.storage.blobs.remove(row.zip_path!) // the bucket's copy too, under the scaled suite
    try {
      const items = ShareInfo.parse((await anon.get(`/api/share/${link.token}`).expect(200)).body.share).items
      const res = await anon.get(items[0].downloadUrl)
      expect(res.status).toBe(404)
      expect(res.body.error.code).toBe('FILE_MISSING')
      expect(JSON.stringify(res.body)).not.toContain(server.dir)
    } finally {
      fs.renameSync(`${zip}.away`, zip)
      await server.ctx.storage.persist(row.zip_path!)
    }
  })
})
