// The demo's packs: a fresh demo has one published pack a producer can download
// at once and one draft for the designer, both made through the services and the
// build job a person uses; a second start on the same data makes no second pack.
// The zip is listed by Debian's Info-ZIP `unzip -l`.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Pack } from '@shared/schemas/packs'
import { startServer, type RunningServer } from '../../server/server'
import { signedIn } from '../helpers/server'
import { makeTmpDir, type TmpDir } from '../helpers/audio-files'
import { binary } from './packs-fixtures'

let tmp: TmpDir
let server: RunningServer | null = null
let seconds: number

const start = () =>
  startServer(
    {
      port: 0,
      dbFile: path.join(tmp.dir, 'demo.sqlite'),
      storageDir: path.join(tmp.dir, 'storage'),
      demo: true,
      demoAudio: true,
      clientDir: path.join(tmp.dir, 'no-client'),
      // Jobs in this process even under the scaled suite's REDIS_URL: the demo's own build is what is tested.
      redisUrl: null,
    },
    { ...process.env, SMTP_URL: '', SESSION_SECRET: '' },
  )

beforeAll(async () => {
  tmp = makeTmpDir('strayfield-demo-packs-')
  const t0 = Date.now()
  server = await start()
  await server.demoPacks
  seconds = (Date.now() - t0) / 1000
})
afterAll(async () => {
  await server?.stop()
  tmp?.cleanup()
})

describe('demo packs', () => {
  it('gives the producer one published pack whose zip downloads with its manifest', async () => {
    console.log(`demo start to packs in place: ${seconds.toFixed(1)} s`)
    const producer = await signedIn(server!.url, 'producer')
    const packs = (await producer.get('/api/packs').expect(200)).body.packs as Pack[]
    expect(packs.map((p) => p.name)).toEqual(['Bench hum beds'])
    const build = packs[0].publishedBuild!
    expect(build.status).toBe('done')
    const zip = (await producer.get(`/api/pack-builds/${build.id}/download`).buffer(true).parse(binary).expect(200))
      .body as Buffer
    const file = path.join(tmp.dir, 'bench-hum-beds.zip')
    fs.writeFileSync(file, zip)
    const listing = execFileSync('unzip', ['-l', file], { encoding: 'utf8' })
    expect(listing).toMatch(/\bmanifest\.json\b/)
    expect(listing).toMatch(/\bLICENSE\.txt\b/)
    expect(listing.match(/\.wav\b/g)).toHaveLength(3)
  })

  it('gives the designer a draft beside it, for the pack picker', async () => {
    const designer = await signedIn(server!.url, 'designer')
    const packs = (await designer.get('/api/packs').expect(200)).body.packs as Pack[]
    const draft = packs.find((p) => p.name === 'Whine and burst one-shots')
    expect(draft).toBeDefined()
    expect(draft!.publishedBuild).toBeNull()
    expect((await designer.get(`/api/packs/${draft!.id}`).expect(200)).body.pack.items).toHaveLength(2)
    expect(packs).toHaveLength(2)
  })

  it('makes no second pack or build at a second start on the same data', async () => {
    await server!.stop()
    server = null
    server = await start()
    await server.demoPacks
    const designer = await signedIn(server.url, 'designer')
    const packs = (await designer.get('/api/packs').expect(200)).body.packs as Pack[]
    expect(packs.map((p) => p.name).sort()).toEqual(['Bench hum beds', 'Whine and burst one-shots'])
    const published = packs.find((p) => p.name === 'Bench hum beds')!
    expect((await designer.get(`/api/packs/${published.id}/builds`).expect(200)).body.builds).toHaveLength(1)
  })
})
