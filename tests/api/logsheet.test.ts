// The recordist's side of the library: devices added where takes are logged,
// bulk edits limited to one's own takes, removing and restoring takes (and the
// purge after 30 days), and the capture log as CSV.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { SOURCE_KINDS } from '@shared/schemas/sources'
import { purgeRemovedTakes } from '../../server/takes/takes.removal'
import { seedLibrary, insertTakeRow, insertSession, type SeededLibrary } from './library-fixtures'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'

let server: TestServer
let lib: SeededLibrary
let recordist: Client
let designer: Client
let producer: Client
let admin: Client

beforeAll(async () => {
  server = await startTestServer()
  lib = await seedLibrary(server.ctx.db)
  ;[recordist, designer, producer, admin] = await Promise.all(
    ['recordist', 'designer', 'producer', 'admin'].map((r) => signedIn(server.url, r)),
  )
})
afterAll(async () => {
  await server.stop()
})

const ids = (res: { body: { items: { id: number }[] } }) => res.body.items.map((t) => t.id)

describe('source devices added while logging', () => {
  it('lets a recordist add a device with a name and a kind, and nothing more', async () => {
    const res = await recordist.post('/api/sources', { name: 'Garage door opener', kind: 'appliance' }).expect(201)
    expect(res.body.source).toMatchObject({
      name: 'Garage door opener',
      kind: 'appliance',
      makeModel: null,
      takeCount: 0,
    })
    // Editing the catalogue stays with designers and admins.
    await recordist.patch(`/api/sources/${res.body.source.id}`, { makeModel: 'Wall unit' }).expect(403)
    await designer.patch(`/api/sources/${res.body.source.id}`, { makeModel: 'Wall unit' }).expect(200)
    await producer.post('/api/sources', { name: 'Anything', kind: 'other' }).expect(403)
  })

  it('answers 409 naming the device the catalogue already has, whatever the case and spacing', async () => {
    const res = await recordist
      .post('/api/sources', { name: '  bench   LAPTOP charger ', kind: 'power-supply' })
      .expect(409)
    expect(res.body.error.code).toBe('SOURCE_EXISTS')
    expect(res.body.error.message).toContain('Bench laptop charger')
    expect(res.body.error.details.sourceId).toBe(lib.source.charger)
  })

  it('knows the kinds of the trade and refuses others', async () => {
    for (const kind of [
      'power-supply',
      'display',
      'radio-link',
      'computer',
      'motor',
      'camera',
      'lighting',
      'appliance',
      'mains-wiring',
      'vehicle',
      'other',
    ]) {
      expect(SOURCE_KINDS).toContain(kind)
    }
    await recordist.post('/api/sources', { name: 'Tram overhead line', kind: 'vehicle' }).expect(201)
    const bad = await recordist.post('/api/sources', { name: 'Toaster', kind: 'toaster' }).expect(400)
    expect(bad.body.error.code).toBe('VALIDATION_FAILED')
  })
})

describe('bulk edits by a recordist', () => {
  it('changes their own takes', async () => {
    const res = await recordist
      .post('/api/takes/bulk', {
        ids: [lib.take.A, lib.take.B],
        sources: [{ sourceId: lib.source.charger, state: 'idle' }],
        addTags: ['bench'],
      })
      .expect(200)
    expect(res.body.updated).toBe(2)
    for (const t of res.body.takes) {
      expect(t.sources).toEqual([expect.objectContaining({ sourceId: lib.source.charger, state: 'idle' })])
      expect(t.tags).toContain('bench')
    }
  })

  it('refuses a selection with takes of others with 403 naming them, and changes nothing', async () => {
    const before = (await recordist.get(`/api/takes/${lib.take.A}`).expect(200)).body.take
    const res = await recordist
      .post('/api/takes/bulk', { ids: [lib.take.A, lib.take.C, lib.take.D], addTags: ['mine'] })
      .expect(403)
    expect(res.body.error.code).toBe('FORBIDDEN')
    expect(res.body.error.message).toContain('2 of the 3 selected are not yours')
    expect(res.body.error.message).toContain('Fan hum sixty')
    expect(res.body.error.message).toContain('Monitor whine bright')
    expect(res.body.error.details.takeIds.sort()).toEqual([lib.take.C, lib.take.D].sort())
    const after = (await recordist.get(`/api/takes/${lib.take.A}`).expect(200)).body.take
    expect(after.tags).toEqual(before.tags)
  })

  it('moves their takes only into capture sessions they created', async () => {
    const designersSession = (
      await admin.post('/api/capture-sessions', { title: 'Admin session', date: '2026-11-30' }).expect(201)
    ).body.session.id
    const res = await recordist.post('/api/takes/bulk', { ids: [lib.take.A], sessionId: designersSession }).expect(403)
    expect(res.body.error.message).toContain('Admin session')
    await recordist.post('/api/takes/bulk', { ids: [lib.take.A], sessionId: lib.session.roof }).expect(200)
    await recordist.post('/api/takes/bulk', { ids: [lib.take.A], sessionId: lib.session.bench }).expect(200)
  })

  it('still lets designers bulk-edit every take, and producers none', async () => {
    await designer.post('/api/takes/bulk', { ids: [lib.take.A, lib.take.C], addTags: ['reviewed'] }).expect(200)
    await producer.post('/api/takes/bulk', { ids: [lib.take.A], addTags: ['x'] }).expect(403)
  })
})

describe('removing a take', () => {
  it('takes it out of the library, search, session counts and device counts, and restores it', async () => {
    const session = (await recordist.get(`/api/capture-sessions/${lib.session.basement}`).expect(200)).body.session
    const radioBefore = (await recordist.get(`/api/sources/${lib.source.radio}`).expect(200)).body.source.takeCount

    const res = await recordist.delete(`/api/takes/${lib.take.E}`).expect(200)
    expect(res.body.removed).toMatchObject({
      takeId: lib.take.E,
      filename: 'E_radio.wav',
      removedBy: { id: lib.user.recordist },
    })
    // 30 days to the millisecond.
    expect(Date.parse(res.body.removed.purgeAfter) - Date.parse(res.body.removed.removedAt)).toBe(30 * 24 * 3600 * 1000)

    expect(ids(await designer.get('/api/takes?pageSize=200').expect(200))).not.toContain(lib.take.E)
    expect(ids(await designer.get('/api/takes?q=radio').expect(200))).not.toContain(lib.take.E)
    expect(ids(await designer.get('/api/takes?q=radio&minLufs=-20').expect(200))).not.toContain(lib.take.E)
    expect(ids(await designer.get('/api/takes?sort=integratedLufs').expect(200))).not.toContain(lib.take.E)
    const total = (await designer.get('/api/takes?q=bursts').expect(200)).body.total
    expect(total).toBe(0)
    expect(
      (await recordist.get(`/api/capture-sessions/${lib.session.basement}`).expect(200)).body.session.takeCount,
    ).toBe(session.takeCount - 1)
    expect((await recordist.get(`/api/sources/${lib.source.radio}`).expect(200)).body.source.takeCount).toBe(
      radioBefore - 1,
    )

    const removed = (await recordist.get('/api/removed-takes').expect(200)).body.takes
    expect(removed.map((t: { takeId: number }) => t.takeId)).toContain(lib.take.E)
    await recordist.delete(`/api/takes/${lib.take.E}`).expect(409)

    await recordist.post(`/api/takes/${lib.take.E}/restore`).expect(200)
    expect(ids(await designer.get('/api/takes?q=radio').expect(200))).toContain(lib.take.E)
    expect(
      (await recordist.get(`/api/capture-sessions/${lib.session.basement}`).expect(200)).body.session.takeCount,
    ).toBe(session.takeCount)
    await recordist.post(`/api/takes/${lib.take.E}/restore`).expect(409)
    const history = (await recordist.get(`/api/takes/${lib.take.E}/history`).expect(200)).body.events.map(
      (e: { kind: string }) => e.kind,
    )
    expect(history.slice(0, 2)).toEqual(['restored', 'removed'])
  })

  it('lets only the uploader, designers and admins remove a take', async () => {
    const res = await recordist.delete(`/api/takes/${lib.take.C}`).expect(403)
    expect(res.body.error.message).toContain('uploaded by')
    await producer.delete(`/api/takes/${lib.take.C}`).expect(403)
    await designer.delete(`/api/takes/${lib.take.C}`).expect(200)
    // A recordist's Removed list holds only their own takes; a designer's every one.
    expect(
      (await recordist.get('/api/removed-takes').expect(200)).body.takes.map((t: { takeId: number }) => t.takeId),
    ).not.toContain(lib.take.C)
    expect(
      (await designer.get('/api/removed-takes').expect(200)).body.takes.map((t: { takeId: number }) => t.takeId),
    ).toContain(lib.take.C)
    await designer.post(`/api/takes/${lib.take.C}/restore`).expect(200)
    await designer.delete('/api/takes/999999').expect(404)
  })

  it('refuses with 409 a take in a published pack build, naming the pack version', async () => {
    const db = server.ctx.db
    const pack = await db
      .insertInto('packs')
      .values({ name: 'Mains textures', naming_template: '{title}', settings_json: '{}' })
      .returning('id')
      .executeTakeFirstOrThrow()
    const build = await db
      .insertInto('pack_builds')
      .values({
        pack_id: pack.id,
        version: 2,
        status: 'done',
        snapshot_json: '{}',
        item_count: 1,
        published_at: new Date().toISOString(),
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    await db
      .insertInto('pack_build_items')
      .values({
        build_id: build.id,
        position: 1,
        take_id: lib.take.B,
        file_name: 'b.wav',
        size_bytes: 1,
        sha256: 'x',
        duration_seconds: 1,
        sample_rate: 48000,
        bit_depth: 24,
        channels: 2,
        gain_db: 0,
      })
      .execute()
    const res = await designer.delete(`/api/takes/${lib.take.B}`).expect(409)
    expect(res.body.error.code).toBe('TAKE_PUBLISHED')
    expect(res.body.error.message).toContain('\u201cMains textures\u201d version 2')
    expect(res.body.error.details.builds).toEqual([{ packId: pack.id, packName: 'Mains textures', version: 2 }])
    expect(ids(await designer.get('/api/takes?pageSize=200').expect(200))).toContain(lib.take.B)
  })

  it('purges takes removed more than 30 days ago with their files, and keeps younger ones', async () => {
    const { db, storage } = server.ctx
    const sessionId = await insertSession(db, 'Purge session', '', lib.user.recordist)
    const old = await insertTakeRow(db, { sessionId, uploaderId: lib.user.recordist, title: 'Old mistake' })
    const young = await insertTakeRow(db, { sessionId, uploaderId: lib.user.recordist, title: 'Recent mistake' })
    const files: Record<number, string> = {}
    for (const id of [old, young]) {
      const row = await db.selectFrom('takes').select('audio_path').where('id', '=', id).executeTakeFirstOrThrow()
      files[id] = storage.abs(row.audio_path)
      fs.mkdirSync(path.dirname(files[id]), { recursive: true })
      fs.writeFileSync(files[id], 'RIFF')
      fs.writeFileSync(storage.peaksPath(id), 'peaks')
      await recordist.delete(`/api/takes/${id}`).expect(200)
    }
    const now = new Date()
    await db
      .updateTable('take_removals')
      .set({ removed_at: new Date(now.getTime() - 31 * 86400_000).toISOString() })
      .where('take_id', '=', old)
      .execute()
    await db
      .updateTable('take_removals')
      .set({ removed_at: new Date(now.getTime() - 29 * 86400_000).toISOString() })
      .where('take_id', '=', young)
      .execute()

    expect(await purgeRemovedTakes(db, storage, now)).toEqual([old])
    expect(fs.existsSync(files[old])).toBe(false)
    expect(fs.existsSync(path.join(storage.root, 'derived', `take-${old}`))).toBe(false)
    await recordist.get(`/api/takes/${old}`).expect(404)
    expect(fs.existsSync(files[young])).toBe(true)
    expect(
      (await recordist.get('/api/removed-takes').expect(200)).body.takes.map((t: { takeId: number }) => t.takeId),
    ).toContain(young)
  })
})

describe('the capture log as CSV', () => {
  it('lists the session in file-name order with the logged columns, formula-safe, numbers left numeric', async () => {
    const db = server.ctx.db
    const sessionId = (
      await recordist.post('/api/capture-sessions', { title: 'Log export, bench', date: '2026-11-30' }).expect(201)
    ).body.session.id
    const b = await insertTakeRow(db, {
      sessionId,
      uploaderId: lib.user.recordist,
      title: '=HYPERLINK("http://x.example")',
      filename: 'T002.wav',
    })
    const a = await insertTakeRow(db, {
      sessionId,
      uploaderId: lib.user.recordist,
      title: 'First, "quoted"',
      filename: 'T001.wav',
    })
    const analysis = {
      levels: { samplePeakDbfs: -1, truePeakDbtp: -0.46, rmsDbfs: -20, channels: [] },
      loudness: { integratedLufs: -23.04, loudnessRangeLu: 4.25, maxMomentaryLufs: -20, maxShortTermLufs: -21 },
      noiseFloorDbfs: -70,
      spectrum: { centroidHz: 1000, tonalPeaks: [], mainsHum: { hz: 50, ratioDb: 12 } },
      metadata: { bext: null, ixml: null, info: {}, cues: [], loops: [], tags: {} },
    }
    const format = {
      container: 'RIFF',
      encoding: 'pcm',
      bitsPerSample: 24,
      validBitsPerSample: 24,
      sampleRate: 48000,
      channels: 2,
      channelMask: 0,
      frames: 480000,
      durationSeconds: 10,
      recovered: false,
    }
    await db
      .updateTable('takes')
      .set({ analysis_json: JSON.stringify(analysis), format_json: JSON.stringify(format) })
      .where('id', '=', a)
      .execute()
    await designer
      .patch(`/api/takes/${a}`, {
        tags: ['hum', '-minus'],
        sources: [{ sourceId: lib.source.charger, state: '+charging' }],
      })
      .expect(200)

    const res = await producer.get(`/api/capture-sessions/${sessionId}/log.csv`).expect(200)
    expect(res.headers['content-type']).toMatch(/^text\/csv/)
    expect(res.headers['content-disposition']).toMatch(
      /^attachment; filename="?2026-11-30-Log-export-bench-capture-log\.csv"?$/,
    )
    // A byte-order mark first (the shared writer's, so spreadsheets read UTF-8), then the header.
    expect(res.text.startsWith('\uFEFF')).toBe(true)
    const lines = res.text.slice(1).split('\r\n')
    expect(lines[0]).toBe(
      'File,Title,Device,State,Duration (s),Format,Integrated loudness (LUFS),True peak (dBTP),Loudness range (LU),Hum (Hz),Tags',
    )
    // RFC 4180 quoting; OWASP CSV-injection guard on text cells only.
    expect(lines[1]).toBe(
      'T001.wav,"First, ""quoted""",Bench laptop charger,\'+charging,10,48000 Hz 24-bit PCM 2 ch RIFF,-23,-0.5,4.3,50,\'-minus; hum',
    )
    expect(lines[2]).toBe(`T002.wav,"'=HYPERLINK(""http://x.example"")",,,,,,,,,`)
    expect(lines[3]).toBe('')
    expect(b).toBeGreaterThan(0)
  })

  it('answers 404 for an unknown session', async () => {
    await recordist.get('/api/capture-sessions/999999/log.csv').expect(404)
  })
})
