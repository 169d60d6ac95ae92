// Building a pack end to end over HTTP: build → poll → download with ranges, the
// zip checked by Info-ZIP's `unzip -t` and Python's zipfile, the manifests held
// against the files, every rendered file measured by ffmpeg's ebur128 filter and
// its bext read back by ffprobe; then publishing, following (mail over a test
// SMTP server on loopback) and what producers may download.
import { createHash } from 'node:crypto'
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { PackBuild, PackDetail } from '@shared/schemas/packs'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { startTestSmtp } from '../helpers/smtp'
import { ffmpegEbur128 } from '../helpers/reference-tools'
import {
  binary,
  describeTake,
  filesUnder,
  newSession,
  SIGNALS,
  uploadMeasured,
  waitForBuild,
  type FixtureTake,
} from './packs-fixtures'

let smtp: Awaited<ReturnType<typeof startTestSmtp>>
let server: TestServer
let admin: Client
let designer: Client
let producer: Client
let dir: string
let takes: Record<'noise' | 'hum' | 'tone', FixtureTake>
let packId: number
let build: PackBuild
let zipBytes: Buffer

beforeAll(async () => {
  smtp = await startTestSmtp()
  server = await startTestServer({ smtpUrl: smtp.url, mailCatcher: false })
  admin = await signedIn(server.url, 'admin')
  designer = await signedIn(server.url, 'designer')
  producer = await signedIn(server.url, 'producer')
  dir = path.join(server.dir, 'files')
  const session = await newSession(admin)
  takes = {
    noise: await uploadMeasured(admin, session, SIGNALS.noise(path.join(dir, 'noise.wav'))),
    hum: await uploadMeasured(admin, session, SIGNALS.hum(path.join(dir, 'hum.wav'))),
    tone: await uploadMeasured(admin, session, SIGNALS.tone(path.join(dir, 'tone.wav'))),
  }
  await describeTake(server, takes.noise.id, {
    device: 'Bench charger',
    kind: 'power-supply',
    state: 'charging',
    tags: ['hiss', 'noise'],
    title: 'Charger hiss close',
  })
  await describeTake(server, takes.hum.id, {
    device: 'Doorbell transformer',
    kind: 'mains-wiring',
    state: 'idle',
    tags: ['hum'],
    title: 'Transformer hum',
  })
  await describeTake(server, takes.tone.id, {
    device: 'Desk monitor',
    kind: 'display',
    state: 'bright',
    tags: ['whine', 'tonal'],
    title: 'Monitor whine',
  })

  const created = await designer.post('/api/packs', {
    name: 'Bench Hums & Hiss',
    description: 'Field sounds of the bench',
    settings: { bitDepth: 24 },
  })
  expect(created.status).toBe(201)
  packId = created.body.pack.id
  const batch = await designer.post(`/api/packs/${packId}/items/batch`, {
    items: [
      { takeId: takes.noise.id },
      { takeId: takes.hum.id, startSeconds: 0.5, endSeconds: 3.5, kind: 'loop' },
      { takeId: takes.tone.id, settings: { bitDepth: 32 } },
    ],
  })
  expect(batch.status).toBe(201)
}, 120_000)

afterAll(async () => {
  await server?.stop()
  await smtp?.close()
})

const downloadPath = () => `/api/pack-builds/${build.id}/download`

describe('a build', () => {
  it('answers 202 with a queued build, runs as a job and ends done with version 1, size and SHA-256', async () => {
    const res = await designer.post(`/api/packs/${packId}/builds`)
    expect(res.status).toBe(202)
    expect(res.body.build).toMatchObject({
      id: expect.any(Number),
      status: expect.stringMatching(/queued|running/),
      version: 1,
    })
    const done = PackBuild.parse(await waitForBuild(designer, res.body.build.id))
    expect(done.status).toBe('done')
    expect(done.progress).toBe(1)
    expect(done.fileName).toBe('Bench_Hums_and_Hiss_v1.zip')
    build = done
    const zip = await designer.get(downloadPath()).buffer(true).parse(binary).expect(200)
    zipBytes = zip.body
    expect(zip.headers['content-type']).toBe('application/zip')
    expect(zip.headers['content-disposition']).toContain('Bench_Hums_and_Hiss_v1.zip')
    expect(Number(zip.headers['content-length'])).toBe(done.sizeBytes)
    expect(zip.headers['accept-ranges']).toBe('bytes')
    // SHA-256 of the bytes received, recomputed here (Node's OpenSSL binding).
    expect(createHash('sha256').update(zipBytes).digest('hex')).toBe(done.sha256)
    // No temp renders or partial zips are left in storage.
    expect(
      filesUnder(path.join(server.ctx.config.storageDir, 'builds')).filter((f) => /\.part$|tmp\//.test(f)),
    ).toEqual([])
  })

  it('is a valid zip for Info-ZIP unzip -t and Python zipfile.testzip()', () => {
    const file = path.join(server.dir, 'v1.zip')
    fs.writeFileSync(file, zipBytes)
    const out = execFileSync('unzip', ['-t', file], { encoding: 'utf8' })
    expect(out).toMatch(/No errors detected/)
    const py = execFileSync(
      'python3',
      [
        '-c',
        'import sys, zipfile; z = zipfile.ZipFile(sys.argv[1]); print(repr(z.testzip())); print("\\n".join(i.filename + " " + str(i.compress_type) for i in z.infolist()))',
        file,
      ],
      {
        encoding: 'utf8',
      },
    )
    const [bad, ...entries] = py.trim().split('\n')
    expect(bad).toBe('None')
    // Every entry stored (compression method 0, PKWARE APPNOTE 4.4.5).
    expect(entries.map((e) => e.split(' ')[1])).toEqual(entries.map(() => '0'))
    expect(entries.map((e) => e.split(' ')[0]).slice(-3)).toEqual(['manifest.json', 'manifest.csv', 'LICENSE.txt'])
  })

  it('holds manifests that match the files: names, sizes and SHA-256 recomputed', () => {
    const out = path.join(server.dir, 'v1')
    execFileSync('unzip', ['-q', '-o', path.join(server.dir, 'v1.zip'), '-d', out])
    const manifest = JSON.parse(fs.readFileSync(path.join(out, 'manifest.json'), 'utf8'))
    expect(manifest.pack).toMatchObject({ id: packId, name: 'Bench Hums & Hiss' })
    expect(manifest.build).toMatchObject({ id: build.id, version: 1 })
    const wavs = fs
      .readdirSync(out)
      .filter((f) => f.endsWith('.wav'))
      .sort()
    expect(manifest.items.map((i: { file: string }) => i.file).sort()).toEqual(wavs)
    for (const item of manifest.items) {
      const bytes = fs.readFileSync(path.join(out, item.file))
      expect(createHash('sha256').update(bytes).digest('hex')).toBe(item.sha256)
      // Format fields against ffprobe (Debian ffmpeg).
      const probe = JSON.parse(
        execFileSync('ffprobe', ['-v', 'error', '-show_streams', '-of', 'json', path.join(out, item.file)], {
          encoding: 'utf8',
        }),
      ).streams[0]
      expect(Number(probe.sample_rate)).toBe(item.sampleRate)
      expect(probe.channels).toBe(item.channels)
      expect(Number(probe.duration)).toBeCloseTo(item.durationSeconds, 3)
    }
    // manifest.csv: the same rows, parsed by Python's csv module (RFC 4180 dialect).
    const csv = JSON.parse(
      execFileSync(
        'python3',
        [
          '-c',
          'import csv, json, sys; print(json.dumps(list(csv.DictReader(open(sys.argv[1], newline="")))))',
          path.join(out, 'manifest.csv'),
        ],
        { encoding: 'utf8' },
      ),
    )
    expect(csv.map((r: { file: string }) => r.file)).toEqual(manifest.items.map((i: { file: string }) => i.file))
    for (const [i, row] of csv.entries()) {
      const m = manifest.items[i]
      expect(row.sha256).toBe(m.sha256)
      expect(row.sources).toBe(m.sources.join('; '))
      expect(row.tags).toBe(m.tags.join(';'))
      expect(row.licence).toBe(m.licence)
      expect(Number(row.takeId)).toBe(m.takeId)
    }
    expect(fs.readFileSync(path.join(out, 'LICENSE.txt'), 'utf8')).toContain(manifest.pack.licence)
  })

  it('renders every item to −18 LUFS ±0.2 LU and at most −1 dBTP + 0.1 dB by ffmpeg ebur128 (EBU R 128 meter)', () => {
    const out = path.join(server.dir, 'v1')
    const manifest = JSON.parse(fs.readFileSync(path.join(out, 'manifest.json'), 'utf8'))
    for (const item of manifest.items) {
      const ref = ffmpegEbur128(path.join(out, item.file))
      expect(item.underTargetDb).toBeNull()
      expect(Math.abs(ref.integratedLufs - -18)).toBeLessThanOrEqual(0.2)
      expect(ref.truePeakDbtp).toBeLessThanOrEqual(-1 + 0.1)
      expect(Math.abs(ref.integratedLufs - item.integratedLufs)).toBeLessThanOrEqual(0.2)
    }
  })

  it('shows each item’s numbers before rendering and after the build in GET /api/packs/:id', async () => {
    const pack = PackDetail.parse((await designer.get(`/api/packs/${packId}`).expect(200)).body.pack)
    expect(pack.latestBuild?.id).toBe(build.id)
    for (const item of pack.items) {
      expect(item.source.integratedLufs).not.toBeNull()
      expect(item.rendered).toMatchObject({ buildId: build.id, version: 1, file: item.fileName, underTargetDb: null })
      expect(Math.abs(item.rendered!.integratedLufs! - -18)).toBeLessThanOrEqual(0.1)
    }
    expect(pack.items[0].source.measuredFrom).toBe('take')
    expect(pack.items[1].source.measuredFrom).toBe('range')
  })
})

describe('downloading with HTTP ranges (RFC 9110 §14)', () => {
  const ranged = (c: Client, range: string) => c.get(downloadPath()).set('Range', range).buffer(true).parse(binary)

  it('serves the first bytes, a middle slice and a suffix as 206 with Content-Range', async () => {
    const size = zipBytes.length
    const first = await ranged(designer, 'bytes=0-99')
    expect(first.status).toBe(206)
    expect(first.headers['content-range']).toBe(`bytes 0-99/${size}`)
    expect(first.body.equals(zipBytes.subarray(0, 100))).toBe(true)
    // "PK\x03\x04": a local file header signature (PKWARE APPNOTE 4.3.7).
    expect(first.body.subarray(0, 4).toString('latin1')).toBe('PK\x03\x04')
    const mid = Math.floor(size / 2)
    const middle = await ranged(designer, `bytes=${mid}-${mid + 999}`)
    expect(middle.status).toBe(206)
    expect(middle.body.equals(zipBytes.subarray(mid, mid + 1000))).toBe(true)
    const suffix = await ranged(designer, 'bytes=-22')
    expect(suffix.status).toBe(206)
    // The end of central directory record, 22 bytes without a comment (APPNOTE 4.3.16).
    expect(suffix.body.equals(zipBytes.subarray(size - 22))).toBe(true)
    expect(suffix.body.readUInt32LE(0)).toBe(0x06054b50)
  })

  it('resumes a broken download from an offset, and the pieces make the whole file', async () => {
    const cut = 12345
    const head = await ranged(designer, `bytes=0-${cut - 1}`)
    const rest = await ranged(designer, `bytes=${cut}-`)
    expect(rest.status).toBe(206)
    expect(Buffer.concat([head.body, rest.body]).equals(zipBytes)).toBe(true)
  })

  it('answers 416 with Content-Range: bytes */size to a range past the end', async () => {
    const res = await designer.get(downloadPath()).set('Range', `bytes=${zipBytes.length + 10}-`)
    expect(res.status).toBe(416)
    expect(res.headers['content-range']).toBe(`bytes */${zipBytes.length}`)
    expect(res.body.error.code).toBe('RANGE_NOT_SATISFIABLE')
  })
})

describe('publishing, following and producers', () => {
  it('hides the unpublished pack and build from a producer (404), then delivers them once published', async () => {
    expect((await producer.get('/api/packs')).body.packs).toEqual([])
    expect((await producer.get(`/api/packs/${packId}`)).status).toBe(404)
    expect((await producer.get(`/api/pack-builds/${build.id}`)).status).toBe(404)
    const refused = await producer.get(downloadPath())
    expect(refused.status).toBe(404)
    expect(refused.body.error.code).toBe('BUILD_NOT_FOUND')
    expect((await producer.post(`/api/pack-builds/${build.id}/publish`)).status).toBe(403)

    const pub = await designer.post(`/api/pack-builds/${build.id}/publish`)
    expect(pub.status).toBe(200)
    expect(pub.body.build.publishedAt).toEqual(expect.any(String))
    expect(pub.body.build.publishedBy.name).toEqual(expect.any(String))

    const list = (await producer.get('/api/packs').expect(200)).body.packs
    expect(list.map((p: { id: number }) => p.id)).toEqual([packId])
    expect(list[0].publishedBuild.version).toBe(1)
    const got = await producer.get(downloadPath()).buffer(true).parse(binary)
    expect(got.status).toBe(200)
    expect(got.body.equals(zipBytes)).toBe(true)
    const part = await producer.get(downloadPath()).set('Range', 'bytes=100-199').buffer(true).parse(binary)
    expect(part.status).toBe(206)
    expect(part.body.equals(zipBytes.subarray(100, 200))).toBe(true)
  })

  it('lets a producer audition a published pack’s item: a WAV that ffprobe reads', async () => {
    const pack = (await producer.get(`/api/packs/${packId}`).expect(200)).body.pack
    const item = pack.items[1]
    const res = await producer.get(`/api/packs/${packId}/items/${item.id}/preview`).buffer(true).parse(binary)
    expect(res.status).toBe(200)
    expect(res.headers['content-type']).toBe('audio/wav')
    const file = path.join(server.dir, 'preview.wav')
    fs.writeFileSync(file, res.body)
    const probe = JSON.parse(
      execFileSync('ffprobe', ['-v', 'error', '-show_streams', '-of', 'json', file], { encoding: 'utf8' }),
    ).streams[0]
    expect(Number(probe.sample_rate)).toBe(44100)
    // The same item renders the same samples in a preview and in the build (the dither is seeded).
    const inZip = fs.readFileSync(path.join(server.dir, 'v1', item.fileName))
    const dataOf = (b: Buffer) => b.subarray(b.indexOf('data'), b.indexOf('data') + 4096)
    expect(dataOf(res.body).equals(dataOf(inZip))).toBe(true)
  })

  it('mails a follower at the loopback SMTP server when a new version is published', async () => {
    const f = await producer.post(`/api/packs/${packId}/follow`)
    expect(f.status).toBe(200)
    expect(f.body).toEqual({ following: true, followerCount: 1 })
    const second = await designer.post(`/api/packs/${packId}/builds`).expect(202)
    const v2 = await waitForBuild(designer, second.body.build.id)
    expect(v2).toMatchObject({ status: 'done', version: 2 })
    // Builds are immutable versions: v1's zip is untouched.
    expect((await designer.get(downloadPath()).buffer(true).parse(binary)).body.equals(zipBytes)).toBe(true)
    // Until v2 is published, a producer sees v1's rendered numbers and no trace of v2.
    const seen = (await producer.get(`/api/packs/${packId}`).expect(200)).body.pack
    expect(seen.items[0].rendered.version).toBe(1)
    expect(seen.latestBuild.version).toBe(1)
    expect((await producer.get(`/api/pack-builds/${v2.id}`)).status).toBe(404)
    expect((await designer.get(`/api/packs/${packId}`)).body.pack.items[0].rendered.version).toBe(2)
    await designer.post(`/api/pack-builds/${v2.id}/publish`).expect(200)
    const mail = await smtp.waitFor('producer@example.test')
    expect(mail.subject).toContain('Bench Hums & Hiss')
    expect(mail.subject).toContain('version 2')
    expect(mail.text).toContain(`${server.ctx.config.publicUrl}/packs/${packId}`)
    const un = await producer.delete(`/api/packs/${packId}/follow`)
    expect(un.body).toEqual({ following: false, followerCount: 0 })
    const builds = (await producer.get(`/api/packs/${packId}/builds`).expect(200)).body.builds
    expect(builds.map((b: PackBuild) => b.version)).toEqual([2, 1])
  })
})
