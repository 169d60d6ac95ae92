// The benchmark library: invented takes with varied metadata, measurements,
// tags and device links, seeded the same way every time (a fixed random
// seed), so a smaller library is the start of a larger one. Used by
// `npm run bench:library` and by the search's reference test.
import { createHash } from 'node:crypto'
import type { Db } from '../server/core/database'
import type { NewTake } from '../db/schema'
import { SOURCE_KINDS } from '../shared/schemas/sources'
import { prng } from '../server/audio/synth'

const SEED = 20261201
// Reset per library, so every size holds the same devices and sessions and a smaller library is the start of a larger one.
let rand = prng(SEED)
const pick = <T>(xs: readonly T[]): T => xs[Math.floor(rand() * xs.length)]
const between = (lo: number, hi: number) => lo + rand() * (hi - lo)
const round1 = (x: number) => Math.round(x * 10) / 10

// ---- an invented catalogue ----

const SOUNDS = [
  'hum',
  'whine',
  'chirp',
  'crackle',
  'data burst',
  'drone',
  'buzz',
  'click train',
  'sweep',
  'warble',
  'pulse',
  'hiss',
  'tick',
  'squeal',
  'flutter',
]
const MOODS = [
  'steady',
  'nervous',
  'faint',
  'harsh',
  'glassy',
  'wobbly',
  'dense',
  'sparse',
  'bright',
  'dark',
  'gritty',
  'smooth',
]
const EXTRA_TAGS = [
  'loopable',
  'intro',
  'texture',
  'bed',
  'impact',
  'glitch',
  'ui',
  'sci-fi',
  'industrial',
  'close',
  'distant',
  'mono-safe',
  'noisy',
  'clean',
  'rhythmic',
]
const DEVICE_WORDS: Record<string, string[]> = {
  'power-supply': [
    'laptop charger',
    'phone charger',
    'bench power supply',
    'wall adapter',
    'battery charger',
    'power supply',
  ],
  display: ['desk monitor', 'old tube television', 'tablet screen', 'projector', 'e-paper panel'],
  'radio-link': ['two-way radio', 'wireless router', 'baby monitor', 'key fob', 'telemetry link'],
  motor: ['desk fan', 'drill', 'blender', 'aquarium pump', 'elevator motor', 'shaver'],
  computer: ['tower workstation', 'laptop', 'single-board computer', 'disk array', 'game console'],
  lighting: ['LED strip dimmer', 'fluorescent tube', 'bulb dimmer', 'neon sign transformer'],
  'mains-wiring': ['doorbell transformer', 'extension lead', 'fuse box', 'wall socket'],
  other: ['induction hob', 'electric toothbrush', 'card reader', 'vending machine'],
}
const STATES = [
  'idle',
  'charging',
  'full load',
  'booting',
  'standby',
  'speed 1',
  'speed 2',
  'speed 3',
  'transmitting',
  'receiving',
  'seeking',
  'brightness 30 %',
  'brightness 100 %',
  'spinning up',
  'sleep',
  'scrolling',
  'dimmed',
  '',
]
const PLACES = [
  'back workshop',
  'roof deck',
  'cellar corridor',
  'studio B',
  'kitchen',
  'office floor 3',
  'garage',
  'train platform',
  'server room',
  'library annex',
]

function analysisJson(
  lufs: number,
  tp: number,
  lra: number,
  sp: number,
  nf: number,
  hum: 50 | 60 | null,
  channels: number,
): string {
  const ch = Array.from({ length: channels }, () => ({
    samplePeakDbfs: sp,
    truePeakDbtp: tp,
    rmsDbfs: lufs - 3,
    dcOffset: 0,
    crestFactorDb: sp - lufs + 3,
    clippedSamples: 0,
  }))
  return JSON.stringify({
    levels: { samplePeakDbfs: sp, truePeakDbtp: tp, rmsDbfs: lufs - 3, channels: ch },
    loudness: { integratedLufs: lufs, loudnessRangeLu: lra, maxMomentaryLufs: lufs + 4, maxShortTermLufs: lufs + 2 },
    noiseFloorDbfs: nf,
    spectrum: {
      centroidHz: round1(between(200, 9000)),
      tonalPeaks: Array.from({ length: 6 }, () => ({ hz: round1(between(40, 16000)), db: round1(between(-80, -10)) })),
      mainsHum: { hz: hum, ratioDb: hum ? round1(between(6, 30)) : null },
    },
    metadata: { bext: null, ixml: null, info: {}, cues: [], loops: [], tags: {} },
  })
}

/** Adds `takes` invented takes (with devices, sessions, tags and links) to a migrated database that has the demo team. */
export async function seedLibrary(db: Db, takes: number, progress = false): Promise<void> {
  rand = prng(SEED)
  const users = await db.selectFrom('users').select('id').execute()
  const sources: { id: number; kind: string }[] = []
  await db.transaction().execute(async (trx) => {
    for (const kind of SOURCE_KINDS) {
      // Kinds added later have no words here, so the seeded library (and its timings) stays the one the README reports.
      for (const word of DEVICE_WORDS[kind] ?? []) {
        for (let i = 1; i <= 5; i++) {
          const row = await trx
            .insertInto('sources')
            .values({
              name: `${word[0].toUpperCase()}${word.slice(1)} ${i}`,
              kind,
              make_model: `Generic ${word}, unit ${i}`,
              notes: null,
            })
            .returning('id')
            .executeTakeFirstOrThrow()
          sources.push({ id: row.id, kind })
        }
      }
    }
  })
  const sessions: number[] = []
  await db.transaction().execute(async (trx) => {
    for (let i = 0; i < 500; i++) {
      const row = await trx
        .insertInto('capture_sessions')
        .values({
          title: `${pick(MOODS)} ${pick(SOUNDS)} hunt ${i + 1}`,
          date: `2026-${String(1 + (i % 12)).padStart(2, '0')}-${String(1 + (i % 28)).padStart(2, '0')}`,
          location: pick(PLACES),
          created_by: pick(users).id,
        })
        .returning('id')
        .executeTakeFirstOrThrow()
      sessions.push(row.id)
    }
  })

  const BATCH = 500
  const t0 = Date.now()
  for (let start = 0; start < takes; start += 5000) {
    await db.transaction().execute(async (trx) => {
      for (let b = start; b < Math.min(takes, start + 5000); b += BATCH) {
        const rows: NewTake[] = []
        const extras: { tags: string[]; links: { source_id: number; state: string }[] }[] = []
        for (let i = b; i < Math.min(takes, b + BATCH); i++) {
          const src = pick(sources)
          const words = DEVICE_WORDS[src.kind]
          const sound = pick(SOUNDS)
          const status = rand() < 0.95 ? 'ready' : pick(['queued', 'failed'] as const)
          const ready = status === 'ready'
          const hum = rand() < 0.25 ? 50 : rand() < 0.33 ? 60 : null
          const channels = rand() < 0.6 ? 1 : 2
          const lufs = round1(between(-55, -10))
          const tp = round1(Math.min(0.5, lufs + between(3, 25)))
          const lra = round1(between(0.5, 20))
          const sp = round1(tp - between(0, 1))
          const nf = round1(between(-100, -45))
          const duration = round1(between(1, 600))
          const rate = pick([44100, 48000, 48000, 48000, 96000, 192000])
          const sha = createHash('sha256').update(`bench-${i}`).digest('hex')
          const created = new Date(Date.UTC(2025, 0, 1) + i * 600_000 + Math.floor(rand() * 300_000)).toISOString()
          rows.push({
            session_id: pick(sessions),
            uploader_id: pick(users).id,
            filename: `T${String(i).padStart(5, '0')}_${sound.replace(/\s/g, '_')}.wav`,
            title: `${pick(MOODS)} ${pick(words)} ${sound} ${i % 97}`,
            description:
              rand() < 0.4 ? `${pick(MOODS)} ${sound} from the ${pick(words)}, ${pick(STATES) || 'resting'}` : '',
            notes: rand() < 0.2 ? `Pickup ${Math.round(between(1, 30))} cm away; ${pick(MOODS)}` : '',
            audio_path: `audio/${sha.slice(0, 2)}/${sha}.wav`,
            size_bytes: Math.round(duration * rate * channels * 3),
            sha256: sha,
            status,
            progress: ready ? 1 : 0,
            format_json: JSON.stringify({
              container: 'RIFF',
              encoding: 'pcm',
              bitsPerSample: 24,
              validBitsPerSample: 24,
              sampleRate: rate,
              channels,
              channelMask: 0,
              frames: Math.round(duration * rate),
              durationSeconds: duration,
              recovered: false,
            }),
            analysis_json: ready ? analysisJson(lufs, tp, lra, sp, nf, hum, channels) : null,
            thumb_json: ready ? JSON.stringify(Array.from({ length: 48 }, () => round1(rand()))) : null,
            duration_seconds: duration,
            sample_rate: rate,
            channels,
            bits_per_sample: 24,
            integrated_lufs: ready ? lufs : null,
            true_peak_dbtp: ready ? tp : null,
            loudness_range_lu: ready ? lra : null,
            sample_peak_dbfs: ready ? sp : null,
            noise_floor_dbfs: ready ? nf : null,
            hum_hz: ready ? hum : null,
            bext_description: rand() < 0.5 ? `${pick(words)} captured with induction coil at ${pick(PLACES)}` : '',
            created_at: created,
            updated_at: created,
          })
          const tags = new Set([
            sound,
            ...(rand() < 0.7 ? [pick(EXTRA_TAGS)] : []),
            ...(rand() < 0.4 ? [pick(SOUNDS)] : []),
            ...(rand() < 0.3 ? [pick(EXTRA_TAGS)] : []),
          ])
          const links = [{ source_id: src.id, state: pick(STATES) }]
          if (rand() < 0.2) {
            const other = pick(sources)
            if (other.id !== src.id) links.push({ source_id: other.id, state: pick(STATES) })
          }
          extras.push({ tags: [...tags], links })
        }
        const ids = await trx.insertInto('takes').values(rows).returning('id').execute()
        const tagRows = ids.flatMap((r, k) => extras[k].tags.map((tag) => ({ take_id: r.id, tag })))
        const linkRows = ids.flatMap((r, k) => extras[k].links.map((l) => ({ take_id: r.id, ...l })))
        for (let k = 0; k < tagRows.length; k += 2000)
          await trx
            .insertInto('take_tags')
            .values(tagRows.slice(k, k + 2000))
            .execute()
        for (let k = 0; k < linkRows.length; k += 2000)
          await trx
            .insertInto('take_sources')
            .values(linkRows.slice(k, k + 2000))
            .execute()
      }
    })
    if (progress)
      process.stdout.write(
        `\rseeded ${Math.min(takes, start + 5000)} / ${takes} takes (${((Date.now() - t0) / 1000).toFixed(0)} s)`,
      )
  }
  if (progress) process.stdout.write('\n')
}
