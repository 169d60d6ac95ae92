// A small library with chosen measurements, written straight into the database
// of a started test server, so every search and filter has a known answer.
// (Not a test file: imported by tests/api/library-*.test.ts.)
import { createHash } from 'node:crypto'
import type { Db } from '../../server/core/database'

export interface FixtureTake {
  key: string
  title: string
  filename: string
  session: 'bench' | 'roof' | 'basement'
  uploader: 'recordist' | 'designer' | null
  sampleRate: number
  channels: number
  duration: number
  lufs: number | null
  truePeak: number | null
  lra: number | null
  samplePeak: number | null
  noiseFloor: number | null
  hum: 50 | 60 | null
  status: 'queued' | 'analyzing' | 'ready' | 'failed'
  tags: string[]
  links: { source: keyof typeof FIXTURE_SOURCES; state: string }[]
  description?: string
  notes?: string
  bext?: string
  createdAt: string
}

export const FIXTURE_SESSIONS = {
  bench: { title: 'Workshop bench sweep', location: 'Back workshop' },
  roof: { title: 'Rooftop antenna night', location: 'Roof deck' },
  basement: { title: 'Basement plant room', location: 'Cellar corridor' },
} as const

export const FIXTURE_SOURCES = {
  charger: { name: 'Bench laptop charger', kind: 'power-supply', makeModel: 'Generic 65 W brick' },
  monitor: { name: 'Desk monitor', kind: 'display', makeModel: '27-inch LCD' },
  radio: { name: 'Handheld two-way radio', kind: 'radio-link', makeModel: 'Unbranded UHF handset' },
  fan: { name: 'Desk fan motor', kind: 'motor', makeModel: 'Three-speed pedestal fan' },
  workstation: { name: 'Tower workstation', kind: 'computer', makeModel: 'Self-built tower' },
} as const

const m = (lufs: number, truePeak: number, lra: number, samplePeak: number, noiseFloor: number) => ({
  lufs,
  truePeak,
  lra,
  samplePeak,
  noiseFloor,
})
const none = { lufs: null, truePeak: null, lra: null, samplePeak: null, noiseFloor: null }

export const FIXTURE_TAKES: FixtureTake[] = [
  {
    key: 'A',
    title: 'Charger whine under load',
    filename: 'A_charger_load.wav',
    session: 'bench',
    uploader: 'recordist',
    sampleRate: 48000,
    channels: 1,
    duration: 10,
    ...m(-24, -6, 3, -7, -70),
    hum: null,
    status: 'ready',
    tags: ['whine', 'power supply'],
    links: [{ source: 'charger', state: 'charging' }],
    bext: 'Coil flat on the housing',
    createdAt: '2026-11-01T10:00:00.000Z',
  },
  {
    key: 'B',
    title: 'Transformer hum',
    filename: 'B_transformer.wav',
    session: 'bench',
    uploader: 'recordist',
    sampleRate: 48000,
    channels: 2,
    duration: 30,
    ...m(-18, -3, 2, -4, -60),
    hum: 50,
    status: 'ready',
    tags: ['hum', 'drone'],
    links: [],
    createdAt: '2026-11-02T10:00:00.000Z',
  },
  {
    key: 'C',
    title: 'Fan hum sixty',
    filename: 'C_fan.wav',
    session: 'roof',
    uploader: 'designer',
    sampleRate: 44100,
    channels: 2,
    duration: 20,
    ...m(-30, -12, 5, -13, -65),
    hum: 60,
    status: 'ready',
    tags: ['hum'],
    links: [{ source: 'fan', state: 'speed 2' }],
    createdAt: '2026-11-03T10:00:00.000Z',
  },
  {
    key: 'D',
    title: 'Monitor whine bright',
    filename: 'D_monitor.wav',
    session: 'roof',
    uploader: 'designer',
    sampleRate: 96000,
    channels: 1,
    duration: 15,
    ...m(-36, -15, 1, -16, -80),
    hum: null,
    status: 'ready',
    tags: ['whine'],
    links: [{ source: 'monitor', state: 'brightness 30 %' }],
    createdAt: '2026-11-04T10:00:00.000Z',
  },
  {
    key: 'E',
    title: 'Radio bursts',
    filename: 'E_radio.wav',
    session: 'basement',
    uploader: 'recordist',
    sampleRate: 48000,
    channels: 1,
    duration: 12,
    ...m(-14, -1, 8, -1.5, -50),
    hum: null,
    status: 'ready',
    tags: ['data burst', 'chirp'],
    links: [{ source: 'radio', state: 'transmitting' }],
    createdAt: '2026-11-05T10:00:00.000Z',
  },
  {
    key: 'F',
    title: 'Workstation seek chirps',
    filename: 'F_seek_0193.wav',
    session: 'basement',
    uploader: null,
    sampleRate: 48000,
    channels: 2,
    duration: 60,
    ...m(-42, -20, 12, -21, -90),
    hum: 50,
    status: 'ready',
    tags: ['chirp', 'crackle'],
    links: [
      { source: 'workstation', state: 'disk seeking' },
      { source: 'charger', state: 'idle' },
    ],
    createdAt: '2026-11-06T10:00:00.000Z',
  },
  {
    key: 'G',
    title: 'Queued take',
    filename: 'G_queued.wav',
    session: 'bench',
    uploader: 'recordist',
    sampleRate: 44100,
    channels: 1,
    duration: 5,
    ...none,
    hum: null,
    status: 'queued',
    tags: [],
    links: [],
    createdAt: '2026-11-07T10:00:00.000Z',
  },
  {
    key: 'H',
    title: 'Failed take',
    filename: 'H_failed.wav',
    session: 'roof',
    uploader: 'designer',
    sampleRate: 48000,
    channels: 1,
    duration: 8,
    ...none,
    hum: null,
    status: 'failed',
    tags: ['crackle'],
    links: [{ source: 'fan', state: 'speed 3' }],
    description: 'crackle crackle crackle on the lead',
    createdAt: '2026-11-08T10:00:00.000Z',
  },
]

export interface SeededLibrary {
  /** Fixture key → take id. */
  take: Record<string, number>
  session: Record<keyof typeof FIXTURE_SESSIONS, number>
  source: Record<keyof typeof FIXTURE_SOURCES, number>
  user: Record<'admin' | 'recordist' | 'designer' | 'producer' | 'collaborator', number>
  /** Take id → fixture key. */
  keyOf(id: number): string
}

export async function userIds(db: Db): Promise<SeededLibrary['user']> {
  const rows = await db.selectFrom('users').select(['id', 'email']).execute()
  const id = (role: string) => rows.find((r) => r.email === `${role}@example.test`)!.id
  return {
    admin: id('admin'),
    recordist: id('recordist'),
    designer: id('designer'),
    producer: id('producer'),
    collaborator: id('collaborator'),
  }
}

/** Inserts one take row (with its file never written: only /audio needs one). */
export async function insertTakeRow(
  db: Db,
  t: {
    sessionId: number
    uploaderId: number | null
    title: string
    filename?: string
    duration?: number | null
    createdAt?: string
  },
): Promise<number> {
  const filename = t.filename ?? `${t.title.replace(/\W+/g, '_')}.wav`
  const sha = createHash('sha256').update(`${filename}:${Math.random()}:${process.hrtime.bigint()}`).digest('hex')
  const row = await db
    .insertInto('takes')
    .values({
      session_id: t.sessionId,
      uploader_id: t.uploaderId,
      filename,
      title: t.title,
      audio_path: `audio/${sha.slice(0, 2)}/${sha}.wav`,
      size_bytes: 1000,
      sha256: sha,
      status: 'ready',
      duration_seconds: t.duration === undefined ? 30 : t.duration,
      sample_rate: 48000,
      channels: 1,
      bits_per_sample: 24,
      ...(t.createdAt && { created_at: t.createdAt, updated_at: t.createdAt }),
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  return row.id
}

export async function insertSession(
  db: Db,
  title: string,
  location = '',
  createdBy: number | null = null,
): Promise<number> {
  const row = await db
    .insertInto('capture_sessions')
    .values({ title, date: '2026-11-20', location, created_by: createdBy })
    .returning('id')
    .executeTakeFirstOrThrow()
  return row.id
}

/** The whole fixture library, in one transaction. */
export async function seedLibrary(db: Db): Promise<SeededLibrary> {
  const user = await userIds(db)
  return db.transaction().execute(async (trx) => {
    const session = {} as SeededLibrary['session']
    for (const [key, s] of Object.entries(FIXTURE_SESSIONS)) {
      session[key as keyof typeof FIXTURE_SESSIONS] = await insertSession(trx, s.title, s.location, user.recordist)
    }
    const source = {} as SeededLibrary['source']
    for (const [key, s] of Object.entries(FIXTURE_SOURCES)) {
      const row = await trx
        .insertInto('sources')
        .values({ name: s.name, kind: s.kind, make_model: s.makeModel, created_by: user.designer })
        .returning('id')
        .executeTakeFirstOrThrow()
      source[key as keyof typeof FIXTURE_SOURCES] = row.id
    }
    const take: Record<string, number> = {}
    for (const t of FIXTURE_TAKES) {
      const sha = createHash('sha256').update(`fixture-${t.key}`).digest('hex')
      const row = await trx
        .insertInto('takes')
        .values({
          session_id: session[t.session],
          uploader_id: t.uploader ? user[t.uploader] : null,
          filename: t.filename,
          title: t.title,
          description: t.description ?? '',
          notes: t.notes ?? '',
          audio_path: `audio/${sha.slice(0, 2)}/${sha}.wav`,
          size_bytes: 1000,
          sha256: sha,
          status: t.status,
          progress: t.status === 'ready' ? 1 : 0,
          duration_seconds: t.duration,
          sample_rate: t.sampleRate,
          channels: t.channels,
          bits_per_sample: 24,
          integrated_lufs: t.lufs,
          true_peak_dbtp: t.truePeak,
          loudness_range_lu: t.lra,
          sample_peak_dbfs: t.samplePeak,
          noise_floor_dbfs: t.noiseFloor,
          hum_hz: t.hum,
          bext_description: t.bext ?? '',
          created_at: t.createdAt,
          updated_at: t.createdAt,
        })
        .returning('id')
        .executeTakeFirstOrThrow()
      take[t.key] = row.id
      if (t.tags.length)
        await trx
          .insertInto('take_tags')
          .values(t.tags.map((tag) => ({ take_id: row.id, tag })))
          .execute()
      for (const l of t.links)
        await trx
          .insertInto('take_sources')
          .values({ take_id: row.id, source_id: source[l.source], state: l.state })
          .execute()
    }
    const byId = new Map(Object.entries(take).map(([k, v]) => [v, k]))
    return { take, session, source, user, keyOf: (id: number) => byId.get(id) ?? `#${id}` }
  })
}
