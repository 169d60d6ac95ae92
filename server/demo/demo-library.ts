import fs from 'node:fs'
import type { AppContext } from '../core/context'
import { writeWav } from '../audio/wav-writer'
import { dataBursts, mainsHum, motorSweep, roomTone, switchingWhine } from '../audio/synth'
import type { WavWriteOptions } from '../audio/wav-layout'
import { ingestFile } from '../ingest/ingest.service'
import { createHash } from 'node:crypto'
import type { SourceKind } from '@shared/schemas/sources'
import type { User } from '@shared/schemas/auth'
import type { Role } from '@shared/permissions'
import { CreateCommentBody, CreateRegionBody, UpdateTakeBody } from '@shared/schemas/library'
import { editTake } from '../takes/takes.service'
import { createRegion } from '../regions/regions.service'
import { createComment, editComment } from '../comments/comments.service'
import { DEMO_ACCOUNTS } from './demo-team'

// An invented catalogue and capture session. Devices are described generically:
// no brand, product or person is real.
export const DEMO_SOURCES: { key: string; name: string; kind: SourceKind; makeModel: string; notes: string }[] = [
  {
    key: 'charger',
    name: 'Bench laptop charger',
    kind: 'power-supply',
    makeModel: 'Generic 65 W USB-C brick',
    notes: 'Loudest with a half-charged laptop attached.',
  },
  {
    key: 'monitor',
    name: 'Desk monitor',
    kind: 'display',
    makeModel: '27-inch LCD, external supply',
    notes: 'Whine changes with brightness.',
  },
  {
    key: 'radio',
    name: 'Handheld two-way radio',
    kind: 'radio-link',
    makeModel: 'Unbranded UHF handset',
    notes: 'Bursts on every key-up. Keep the pickup 10 cm away.',
  },
  { key: 'fan', name: 'Desk fan motor', kind: 'motor', makeModel: 'Three-speed pedestal fan', notes: '' },
  {
    key: 'workstation',
    name: 'Tower workstation',
    kind: 'computer',
    makeModel: 'Self-built tower, spinning disks',
    notes: 'Disk seeks read as chirps near the drive bay.',
  },
  { key: 'dimmer', name: 'LED strip dimmer', kind: 'lighting', makeModel: 'PWM dimmer, 12 V strip', notes: '' },
  {
    key: 'transformer',
    name: 'Doorbell transformer',
    kind: 'mains-wiring',
    makeModel: 'Wall-mounted 8 V transformer',
    notes: 'Stays closed; recorded from outside the housing.',
  },
]

interface DemoTake {
  file: string
  source: string
  state: string
  make: () => Float32Array[]
  opts: Omit<WavWriteOptions, 'channels'>
}

const takes = (): DemoTake[] => [
  {
    file: 'T001_transformer_hum.wav',
    source: 'transformer',
    state: 'idle',
    make: () => mainsHum({ hz: 50, seconds: 30, sampleRate: 48000, harmonics: 9, levelDbfs: -12, seed: 11 }),
    opts: {
      sampleRate: 48000,
      encoding: 'pcm',
      bitsPerSample: 24,
      bext: {
        description: 'Doorbell transformer, coil on the housing',
        originator: 'Field recorder',
        originationDate: '2026-11-21',
        originationTime: '10:02:11',
      },
      ixml: '<BWFXML><PROJECT>Workshop bench sweep</PROJECT><SCENE>1</SCENE><TAKE>1</TAKE><NOTE>Coil flat against the housing, left side</NOTE></BWFXML>',
    },
  },
  {
    file: 'T002_fan_hum_60.wav',
    source: 'fan',
    state: 'speed 2',
    make: () =>
      mainsHum({ hz: 60, seconds: 20, sampleRate: 44100, channels: 2, harmonics: 7, levelDbfs: -18, seed: 12 }),
    opts: {
      sampleRate: 44100,
      encoding: 'pcm',
      bitsPerSample: 16,
      info: { INAM: 'Fan on 60 Hz supply, speed 2', ICMT: 'Imported unit on a step-up supply' },
    },
  },
  {
    file: 'T003_monitor_whine.wav',
    source: 'monitor',
    state: 'brightness 30 %',
    make: () =>
      switchingWhine({ hz: 15625, sidebandHz: 120, seconds: 15, sampleRate: 96000, levelDbfs: -20, seed: 13 }),
    opts: { sampleRate: 96000, encoding: 'pcm', bitsPerSample: 24 },
  },
  {
    file: 'T004_radio_bursts.wav',
    source: 'radio',
    state: 'transmitting',
    make: () =>
      dataBursts({
        seconds: 12,
        sampleRate: 48000,
        burstsPerSecond: 3,
        duty: 0.25,
        pulseHz: 2200,
        levelDbfs: -14,
        seed: 14,
      }),
    opts: { sampleRate: 48000, encoding: 'pcm', bitsPerSample: 16 },
  },
  {
    file: 'T005_fan_spin_up.wav',
    source: 'fan',
    state: 'spinning up',
    make: () =>
      motorSweep({ seconds: 25, sampleRate: 48000, channels: 2, fromHz: 40, toHz: 400, levelDbfs: -16, seed: 15 }),
    opts: { sampleRate: 48000, encoding: 'float', bitsPerSample: 32 },
  },
  {
    file: 'T006_room_tone.wav',
    source: 'workstation',
    state: 'idle',
    make: () => roomTone({ seconds: 60, sampleRate: 48000, humHz: 50, levelDbfs: -52, seed: 16 }),
    opts: {
      sampleRate: 48000,
      encoding: 'pcm',
      bitsPerSample: 24,
      bext: { description: 'Workstation idle, room tone for beds', originator: 'Field recorder' },
    },
  },
  {
    file: 'T007_charger_charging.wav',
    source: 'charger',
    state: 'charging',
    make: () => switchingWhine({ hz: 7800, sidebandHz: 100, seconds: 10, sampleRate: 44100, levelDbfs: -24, seed: 17 }),
    opts: { sampleRate: 44100, encoding: 'pcm', bitsPerSample: 24 },
  },
]

/** Seeds the demo catalogue and one capture session whose takes are synthesised now and measured like uploads. */
export async function seedDemoLibrary(ctx: AppContext, recordistId: number): Promise<void> {
  const ids: Record<string, number> = {}
  for (const s of DEMO_SOURCES) {
    const row = await ctx.db
      .insertInto('sources')
      .values({ name: s.name, kind: s.kind, make_model: s.makeModel, notes: s.notes, created_by: recordistId })
      .returning('id')
      .executeTakeFirstOrThrow()
    ids[s.key] = row.id
  }
  const session = await ctx.db
    .insertInto('capture_sessions')
    .values({
      title: 'Workshop bench sweep',
      date: '2026-11-21',
      location: 'Back workshop, bench 2',
      pickup: 'Induction coil (flat pancake)',
      gain_db: 42,
      recorder: 'Portable two-track recorder',
      rig_notes: 'Coil on a 1 m lead; mains-powered devices kept closed.',
      default_source_id: ids.charger,
      default_state: '',
      created_by: recordistId,
    })
    .returning('id')
    .executeTakeFirstOrThrow()

  const takeIds: Record<string, number> = {}
  for (const t of takes()) {
    const planar = t.make()
    const path = ctx.storage.incomingPath()
    await writeWav(path, planar, { ...t.opts, channels: planar.length })
    const sha256 = createHash('sha256').update(fs.readFileSync(path)).digest('hex')
    const take = await ingestFile(ctx, {
      sessionId: session.id,
      uploader: { id: recordistId },
      file: { path, size: fs.statSync(path).size, sha256 },
      originalName: t.file,
    })
    await ctx.db.deleteFrom('take_sources').where('take_id', '=', take.id).execute()
    await ctx.db
      .insertInto('take_sources')
      .values({ take_id: take.id, source_id: ids[t.source], state: t.state })
      .execute()
    takeIds[t.file] = take.id
  }
  await seedDemoDiscussion(ctx, takeIds)
}

// ---- the team's work on the session: tags, regions and comment threads ----

const DEMO_TAGS: Record<string, string[]> = {
  'T001_transformer_hum.wav': ['hum', 'drone', 'mains 50 hz', 'bed'],
  'T002_fan_hum_60.wav': ['hum', 'mains 60 hz', 'motor'],
  'T003_monitor_whine.wav': ['whine', 'high pitch', 'display'],
  'T004_radio_bursts.wav': ['data burst', 'chirp', 'loud'],
  'T005_fan_spin_up.wav': ['sweep', 'motor', 'drone'],
  'T006_room_tone.wav': ['room tone', 'hum', 'bed'],
  'T007_charger_charging.wav': ['whine', 'crackle', 'power supply'],
}

const DEMO_REGIONS: { file: string; name: string; start: number; end: number }[] = [
  { file: 'T001_transformer_hum.wav', name: 'Steady bed', start: 2, end: 26 },
  { file: 'T003_monitor_whine.wav', name: 'Usable whine', start: 1.5, end: 13 },
  { file: 'T004_radio_bursts.wav', name: 'Three clean bursts', start: 0.4, end: 3.2 },
]

/**
 * Tags, regions and threads written through the same services the API uses
 * (so the history reads as it would), by the invented demo team. Mentions are
 * not mailed while seeding.
 */
async function seedDemoDiscussion(ctx: AppContext, takeIds: Record<string, number>): Promise<void> {
  const rows = await ctx.db.selectFrom('users').select(['id', 'email', 'name', 'role']).execute()
  const person = {} as Record<Role, User>
  for (const a of DEMO_ACCOUNTS) {
    const r = rows.find((x) => x.email === a.email)
    if (r) person[a.role] = { id: r.id, email: r.email, name: r.name, role: r.role as Role }
  }
  const { designer, recordist, producer, collaborator, admin } = person
  if (!designer || !recordist || !producer || !collaborator || !admin) return

  for (const [file, tags] of Object.entries(DEMO_TAGS)) {
    if (takeIds[file])
      await editTake(
        ctx.db,
        file === 'T006_room_tone.wav' ? recordist : designer,
        takeIds[file],
        UpdateTakeBody.parse({ tags }),
      )
  }
  const regionIds: Record<string, number> = {}
  for (const r of DEMO_REGIONS) {
    if (takeIds[r.file])
      regionIds[r.name] = (
        await createRegion(
          ctx.db,
          designer,
          takeIds[r.file],
          CreateRegionBody.parse({ name: r.name, startSeconds: r.start, endSeconds: r.end }),
        )
      ).id
  }

  const quiet = { notify: false }
  const say = (
    who: User,
    file: string,
    body: string,
    extra: { atSeconds?: number; regionId?: number; parentId?: number } = {},
  ) => createComment(ctx, who, takeIds[file], CreateCommentBody.parse({ body, ...extra }), quiet)

  if (takeIds['T001_transformer_hum.wav']) {
    const q = await say(
      designer,
      'T001_transformer_hum.wav',
      'Lovely steady bed. @rory was the coil flat on the housing the whole time?',
      { atSeconds: 4 },
    )
    await say(
      recordist,
      'T001_transformer_hum.wav',
      'Yes, flat against the left side on the 1 m lead. The right side was noisier.',
      { parentId: q.id },
    )
    await say(producer, 'T001_transformer_hum.wav', 'This region would work under the basement scene.', {
      regionId: regionIds['Steady bed'],
    })
  }
  if (takeIds['T002_fan_hum_60.wav']) {
    const q = await say(
      producer,
      'T002_fan_hum_60.wav',
      'Can we have this one a little longer? 20 s is tight for a loop.',
    )
    await say(recordist, 'T002_fan_hum_60.wav', 'Recorded a 2-minute version in the next session.', { parentId: q.id })
    await editComment(ctx, designer, takeIds['T002_fan_hum_60.wav'], q.id, { resolved: true })
  }
  if (takeIds['T003_monitor_whine.wav']) {
    const q = await say(collaborator, 'T003_monitor_whine.wav', 'There is a slight wobble here. Intentional?', {
      atSeconds: 6.2,
    })
    await say(designer, 'T003_monitor_whine.wav', 'It follows the brightness steps. Keeping it, it sounds alive.', {
      parentId: q.id,
    })
  }
  if (takeIds['T004_radio_bursts.wav']) {
    await say(
      admin,
      'T004_radio_bursts.wav',
      'Loud bursts from 0:00.4 on: audition at a low level first. @dana please check the true peak before packing.',
      {
        atSeconds: 0.4,
      },
    )
  }
}
