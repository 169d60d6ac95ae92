// Share links for people without an account: signed tokens naming their link,
// download counting (every request is a new download unless it resumes the last
// counted download where it stopped), expiry, revocation and the download limit (410).
// Ranges follow RFC 9110 §14; the bytes are compared with the designer's own
// download of the same build.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { ShareInfo, ShareLink } from '@shared/schemas/packs'
import { Client, signedIn, startTestServer, type TestServer } from '../helpers/server'
import { binary, newSession, SIGNALS, uploadMeasured, waitForBuild } from './packs-fixtures'

let server: TestServer
let designer: Client
let anon: Client
let buildId: number
let zip: Buffer

const inADay = () => new Date(Date.now() + 24 * 3600 * 1000).toISOString()

beforeAll(async () => {
  server = await startTestServer()
  designer = await signedIn(server.url, 'designer')
  const admin = await signedIn(server.url, 'admin')
  anon = new Client(server.url)
  const take = await uploadMeasured(admin, await newSession(admin), SIGNALS.hum(path.join(server.dir, 'hum.wav'), 2))
  const pack = (await designer.post('/api/packs', { name: 'Shared hums', description: 'For the mix team' })).body.pack
  await designer.post(`/api/packs/${pack.id}/items`, { takeId: take.id }).expect(201)
  buildId = (
    await waitForBuild(designer, (await designer.post(`/api/packs/${pack.id}/builds`).expect(202)).body.build.id)
  ).id
  zip = (await designer.get(`/api/pack-builds/${buildId}/download`).buffer(true).parse(binary).expect(200)).body
}, 120_000)
afterAll(async () => {
  await server?.stop()
})

const createLink = async (body: object) => {
  const res = await designer.post(`/api/pack-builds/${buildId}/share-links`, body)
  expect(res.status).toBe(201)
  return ShareLink.parse(res.body.link)
}
const fetchShare = (token: string, range?: string) => {
  const req = anon.get(`/api/share/${token}/download`)
  if (range) req.set('Range', range)
  return req.buffer(true).parse(binary)
}
const listed = async (id: number) =>
  ShareLink.parse(
    (await designer.get(`/api/pack-builds/${buildId}/share-links`).expect(200)).body.links.find(
      (l: ShareLink) => l.id === id,
    ),
  )

describe('share links', () => {
  it('creates a link whose page and file work without an account', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 3 })
    expect(link).toMatchObject({ buildId, downloads: 0, maxDownloads: 3, revokedAt: null, state: 'active' })
    expect(link.url).toBe(`${server.ctx.config.publicUrl}/share/${link.token}`)
    const info = await anon.get(`/api/share/${link.token}`)
    expect(info.status).toBe(200)
    expect(ShareInfo.parse(info.body.share)).toMatchObject({
      packName: 'Shared hums',
      description: 'For the mix team',
      version: 1,
      fileName: 'Shared_hums_v1.zip',
      sizeBytes: zip.length,
      itemCount: 1,
      downloadsLeft: 3,
    })
    const got = await fetchShare(link.token)
    expect(got.status).toBe(200)
    expect(got.headers['content-disposition']).toContain('Shared_hums_v1.zip')
    expect(Number(got.headers['content-length'])).toBe(zip.length)
    expect(got.body.equals(zip)).toBe(true)
  })

  it('counts a download once, not its resume where it stopped, and shows the count to the designer', async () => {
    const link = await createLink({ expiresAt: inADay() })
    await fetchShare(link.token, 'bytes=0-999').expect(206)
    expect((await listed(link.id)).downloads).toBe(1)
    const rest = await fetchShare(link.token, 'bytes=1000-')
    expect(rest.status).toBe(206)
    expect(rest.headers['content-range']).toBe(`bytes 1000-${zip.length - 1}/${zip.length}`)
    expect(rest.body.equals(zip.subarray(1000))).toBe(true)
    expect((await listed(link.id)).downloads).toBe(1)
    // That download is complete: the last 100 bytes again are a new download.
    await fetchShare(link.token, 'bytes=-100').expect(206)
    expect((await listed(link.id)).downloads).toBe(2)
    await fetchShare(link.token).expect(200)
    const after = await listed(link.id)
    expect(after.downloads).toBe(3)
    expect(after.lastDownloadAt).toEqual(expect.any(String))
    expect(after.maxDownloads).toBeNull()
  })

  it('refuses a new download past the limit with 410, while a started download can still resume', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 2 })
    await fetchShare(link.token).expect(200)
    await fetchShare(link.token, 'bytes=0-4999').expect(206) // the second download, stopped at byte 5000
    const third = await fetchShare(link.token)
    expect(third.status).toBe(410)
    expect(JSON.parse(third.body.toString()).error.code).toBe('SHARE_USED_UP')
    expect((await anon.get(`/api/share/${link.token}`)).status).toBe(410)
    expect((await fetchShare(link.token, 'bytes=5000-')).status).toBe(206)
    expect(await listed(link.id)).toMatchObject({ downloads: 2, state: 'used-up' })
  })

  it('answers 410 once the link has expired (expiry moved into the past in the database)', async () => {
    const link = await createLink({ expiresAt: inADay() })
    await server.ctx.db
      .updateTable('pack_share_links')
      .set({ expires_at: new Date(Date.now() - 1000).toISOString() })
      .where('id', '=', link.id)
      .execute()
    const res = await fetchShare(link.token)
    expect(res.status).toBe(410)
    expect(JSON.parse(res.body.toString()).error.code).toBe('SHARE_EXPIRED')
    expect((await fetchShare(link.token, 'bytes=10-')).status).toBe(410)
    expect((await anon.get(`/api/share/${link.token}`)).body.error.code).toBe('SHARE_EXPIRED')
    expect((await listed(link.id)).state).toBe('expired')
  })

  it('is revocable: DELETE /api/share-links/:id, then 410 for downloads, resumes and the page', async () => {
    const link = await createLink({ expiresAt: inADay() })
    await fetchShare(link.token).expect(200)
    const revoked = await designer.delete(`/api/share-links/${link.id}`)
    expect(revoked.status).toBe(200)
    expect(revoked.body.link).toMatchObject({ id: link.id, state: 'revoked', revokedAt: expect.any(String) })
    const res = await fetchShare(link.token)
    expect(res.status).toBe(410)
    expect(JSON.parse(res.body.toString()).error.code).toBe('SHARE_REVOKED')
    expect((await fetchShare(link.token, 'bytes=10-')).status).toBe(410)
    expect((await anon.get(`/api/share/${link.token}`)).status).toBe(410)
    expect((await designer.delete('/api/share-links/999999')).status).toBe(404)
  })

  it('rejects altered or made-up tokens with 404 (the signature does not match)', async () => {
    const link = await createLink({ expiresAt: inADay() })
    const [id, nonce, sig] = link.token.split('.')
    const flipped = `${id}.${nonce}.${sig.slice(0, -1)}${sig.endsWith('A') ? 'B' : 'A'}`
    expect((await anon.get(`/api/share/${flipped}`)).status).toBe(404)
    const otherId = `${Number(id) + 1}.${nonce}.${sig}`
    expect((await anon.get(`/api/share/${otherId}`)).status).toBe(404)
    expect((await fetchShare('x'.repeat(43))).status).toBe(404)
  })

  it('refuses an expiry in the past (400) and a build that is not done (409)', async () => {
    const past = await designer.post(`/api/pack-builds/${buildId}/share-links`, {
      expiresAt: new Date(Date.now() - 60_000).toISOString(),
    })
    expect(past.status).toBe(400)
    expect(past.body.error.code).toBe('EXPIRY_IN_PAST')
    const packId = (await designer.get(`/api/pack-builds/${buildId}`)).body.build.packId
    const failed = await server.ctx.db
      .insertInto('pack_builds')
      .values({ pack_id: packId, version: 99, status: 'failed', snapshot_json: '{}', item_count: 0 })
      .returning('id')
      .executeTakeFirstOrThrow()
    const res = await designer.post(`/api/pack-builds/${failed.id}/share-links`, { expiresAt: inADay() })
    expect(res.status).toBe(409)
    expect(res.body.error.code).toBe('BUILD_NOT_DONE')
  })
})

describe('a used-up link hands out nothing more, whatever the request shape', () => {
  // Ranges as RFC 9110 §14.1.2 writes them, parsed the way Express's file sender (send + range-parser) parses them.
  const usedUp = async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 1 })
    await fetchShare(link.token).expect(200)
    expect((await listed(link.id)).state).toBe('used-up')
    return link
  }
  const errorCode = (res: { body: Buffer }) => JSON.parse(res.body.toString()).error.code

  it('Range: bytes=00- is a new download from byte 0 (leading zeros): 410', async () => {
    const link = await usedUp()
    const res = await fetchShare(link.token, 'bytes=00-')
    expect(res.status).toBe(410)
    expect(errorCode(res)).toBe('SHARE_USED_UP')
  })

  it('Range: bytes=garbage is a range the sender would ignore: 416, nothing served or counted', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 1 })
    const res = await fetchShare(link.token, 'bytes=garbage')
    expect(res.status).toBe(416)
    expect(res.headers['content-range']).toBe(`bytes */${zip.length}`)
    expect(errorCode(res)).toBe('RANGE_NOT_SATISFIABLE')
    expect((await listed(link.id)).downloads).toBe(0)
    expect((await fetchShare((await usedUp()).token, 'bytes=garbage')).status).toBe(416)
  })

  it('Range: Bytes=0- (another unit spelling, which the sender ignores) is 416, not the whole zip', async () => {
    const link = await usedUp()
    const res = await fetchShare(link.token, 'Bytes=0-')
    expect(res.status).toBe(416)
    expect(res.body.length).toBeLessThan(1000)
  })

  it('Range: bytes=1- is not a resume of anything unfinished: 410', async () => {
    const link = await usedUp()
    const res = await fetchShare(link.token, 'bytes=1-')
    expect(res.status).toBe(410)
    expect(res.body.length).toBeLessThan(1000)
  })

  it('several ranges at once (which the sender would answer with the whole file) are 416', async () => {
    const link = await usedUp()
    expect((await fetchShare(link.token, 'bytes=0-10,20-30')).status).toBe(416)
  })

  it('a range past the end is 416 and counts nothing', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 1 })
    expect((await fetchShare(link.token, `bytes=${zip.length + 10}-`)).status).toBe(416)
    expect((await listed(link.id)).downloads).toBe(0)
  })

  it('a stale If-Range does not turn a range into the whole zip: the range is served and counted', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 1 })
    const res = await anon
      .get(`/api/share/${link.token}/download`)
      .set('Range', 'bytes=0-99')
      .set('If-Range', '"not-this-one"')
      .buffer(true)
      .parse(binary)
    expect(res.status).toBe(206)
    expect(res.body.equals(zip.subarray(0, 100))).toBe(true)
    expect((await listed(link.id)).downloads).toBe(1)
    expect((await anon.get(`/api/share/${link.token}/download`).set('If-None-Match', '*')).status).toBe(410)
  })

  it('a resume must start where the counted download stopped, not earlier', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 1 })
    await fetchShare(link.token, 'bytes=0-2999').expect(206)
    expect((await fetchShare(link.token, 'bytes=3000-3999')).status).toBe(206)
    expect((await fetchShare(link.token, 'bytes=4000-')).status).toBe(206)
    // Finished: going back for more is a new download.
    expect((await fetchShare(link.token, 'bytes=3000-')).status).toBe(410)
    expect((await listed(link.id)).downloads).toBe(1)
  })

  it('HEAD is answered from the row and never counted', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 1 })
    for (let i = 0; i < 3; i++) {
      const head = await anon.agent.head(`/api/share/${link.token}/download`)
      expect(head.status).toBe(200)
      expect(Number(head.headers['content-length'])).toBe(zip.length)
      expect(head.headers['accept-ranges']).toBe('bytes')
    }
    expect((await listed(link.id)).downloads).toBe(0)
    await fetchShare(link.token).expect(200)
    expect((await anon.agent.head(`/api/share/${link.token}/download`)).status).toBe(410)
  })

  it('a missing zip is 404 FILE_MISSING without a server path, and is not counted', async () => {
    const link = await createLink({ expiresAt: inADay(), maxDownloads: 1 })
    const zipKey = (
      await server.ctx.db
        .selectFrom('pack_builds')
        .select('zip_path')
        .where('id', '=', buildId)
        .executeTakeFirstOrThrow()
    ).zip_path!
    const zipPath = server.ctx.storage.abs(zipKey)
    const fs = await import('node:fs')
    fs.renameSync(zipPath, `${zipPath}.away`)
    await server.ctx.storage.blobs.remove(zipKey) // the bucket's copy too, under the scaled suite
    try {
      const res = await fetchShare(link.token)
      expect(res.status).toBe(404)
      const text = res.body.toString()
      expect(JSON.parse(text).error.code).toBe('FILE_MISSING')
      expect(text).not.toContain(server.dir)
      expect(text).not.toMatch(/ENOENT|\/tmp\//)
      expect((await listed(link.id)).downloads).toBe(0)
      // The team's own download of the build: the same fixed words (the file sender's error carried the path).
      const own = await designer.get(`/api/pack-builds/${buildId}/download`)
      expect(own.status).toBe(404)
      expect(own.body.error.code).toBe('FILE_MISSING')
      expect(JSON.stringify(own.body)).not.toContain(server.dir)
    } finally {
      fs.renameSync(`${zipPath}.away`, zipPath)
      await server.ctx.storage.persist(zipKey)
    }
  })

  it('refuses an expiry more than a year ahead (400 EXPIRY_TOO_FAR)', async () => {
    const far = new Date(Date.now() + 400 * 24 * 3600 * 1000).toISOString()
    const res = await designer.post(`/api/pack-builds/${buildId}/share-links`, { expiresAt: far })
    expect(res.status).toBe(400)
    expect(res.body.error.code).toBe('EXPIRY_TOO_FAR')
  })
})
