// `npm run bench:library`: seeds 50,000 takes with varied metadata into a
// temporary database, starts the real server on it, and times typical library
// searches and filters through the HTTP API (p50/p95 over 100 runs after a
// warm-up). Prints the table and writes bench/results/library.md.
//
// Rows go in through Kysely in big transactions; the full-text index is
// filled by the same triggers that keep it current in production. The server
// under test then runs as its own process (`server/main.ts`, as `npm start`
// runs it), so the client's work is not counted against it.
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { createHash } from 'node:crypto'
import { spawn } from 'node:child_process'
import { fileURLToPath } from 'node:url'
import { startServer } from '../server/server'
import type { Db } from '../server/core/database'
import type { NewTake } from '../db/schema'
import { SOURCE_KINDS } from '../shared/schemas/sources'
import { prng } from '../server/audio/synth'
import { seedSimilar, similarRow } from './similar-row'

const TAKES = Number(process.env.BENCH_TAKES ?? 50_000)
const RUNS = Number(process.env.BENCH_RUNS ?? 100)
const WARMUP = 10
const root = path.join(path.dirname(fileURLToPath(import.meta.url)), '..')
const resultsFile = path.join(root, 'bench', 'results', 'library.md')

const rand = prng(20261201)
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

async function seed(db: Db): Promise<void> {
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
  for (let start = 0; start < TAKES; start += 5000) {
    await db.transaction().execute(async (trx) => {
      for (let b = start; b < Math.min(TAKES, start + 5000); b += BATCH) {
        const rows: NewTake[] = []
        const extras: { tags: string[]; links: { source_id: number; state: string }[] }[] = []
        for (let i = b; i < Math.min(TAKES, b + BATCH); i++) {
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
    process.stdout.write(
      `\rseeded ${Math.min(TAKES, start + 5000)} / ${TAKES} takes (${((Date.now() - t0) / 1000).toFixed(0)} s)`,
    )
  }
  process.stdout.write('\n')
}

// ---- an HTTP client that keeps the session cookie ----

async function signIn(base: string): Promise<Record<string, string>> {
  let cookie = ''
  const keep = (res: Response) => {
    const set = res.headers.getSetCookie()
    if (set.length) cookie = set.map((c) => c.split(';')[0]).join('; ')
  }
  const csrf = async () => {
    const res = await fetch(`${base}/api/auth/csrf`, { headers: { cookie } })
    keep(res)
    return ((await res.json()) as { token: string }).token
  }
  const token = await csrf()
  const login = await fetch(`${base}/api/auth/login`, {
    method: 'POST',
    headers: { cookie, 'content-type': 'application/json', 'x-csrf-token': token },
    body: JSON.stringify({ email: 'designer@example.test', password: 'strayfield-demo' }),
  })
  keep(login)
  if (login.status !== 200) throw new Error(`sign-in failed: ${login.status} ${await login.text()}`)
  return { cookie }
}

const quantile = (xs: number[], p: number) => {
  const s = [...xs].sort((a, b) => a - b)
  return s[Math.min(s.length - 1, Math.ceil(p * s.length) - 1)]
}

/** `server/main.ts` on the seeded files, in a child process; resolves with its address once it listens. */
async function serve(dbFile: string, storageDir: string) {
  const child = spawn(process.execPath, ['--import', 'tsx', 'server/main.ts'], {
    cwd: root,
    env: {
      ...process.env,
      PORT: '0',
      STRAYFIELD_DB: dbFile,
      STRAYFIELD_STORAGE: storageDir,
      STRAYFIELD_DEMO: '1',
      SMTP_URL: '',
      SESSION_SECRET: '',
    },
    stdio: ['ignore', 'pipe', 'inherit'],
  })
  const url = await new Promise<string>((resolve, reject) => {
    let out = ''
    child.stdout!.on('data', (d: Buffer) => {
      out += d.toString()
      const m = /running on (http:\/\/\S+)/.exec(out)
      if (m) resolve(m[1])
    })
    child.once('exit', (code) => reject(new Error(`the server exited (${code}) before listening:\n${out}`)))
  })
  child.stdout!.resume()
  return {
    url,
    stop: () =>
      new Promise<void>((resolve) => {
        child.once('exit', () => resolve())
        child.kill('SIGTERM')
      }),
  }
}

async function main(): Promise<void> {
  const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-bench-'))
  // BENCH_DB=file keeps the seeded database there and reuses it on the next run (for working on queries).
  const keep = process.env.BENCH_DB ? path.resolve(process.env.BENCH_DB) : null
  const reuse = keep !== null && fs.existsSync(keep)
  const dbFile = keep ?? path.join(dir, 'bench.sqlite')
  const storageDir = path.join(dir, 'storage')

  // Migrate, create the demo team and seed, through the app's own start-up; then close.
  const seeder = await startServer(
    { port: 0, dbFile, storageDir, demo: true, demoAudio: false, runJobs: false, clientDir: path.join(dir, 'none') },
    { ...process.env, SMTP_URL: '', SESSION_SECRET: '' },
  )
  const db = seeder.ctx.db
  if (!reuse) await seed(db)
  if (!reuse) await seedSimilar(db)
  const sourceCount = Number(
    (
      await db
        .selectFrom('sources')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )
  const anySession = (
    await db.selectFrom('capture_sessions').select('id').orderBy('id').limit(1).offset(41).executeTakeFirstOrThrow()
  ).id
  const anyUploader = (
    await db.selectFrom('users').select('id').where('email', '=', 'recordist@example.test').executeTakeFirstOrThrow()
  ).id
  const fanId = (await db.selectFrom('sources').select('id').where('name', '=', 'Desk fan 3').executeTakeFirstOrThrow())
    .id
  await seeder.stop()

  const server = await serve(dbFile, storageDir)
  try {
    const headers = await signIn(server.url)
    const queries: [string, string][] = [
      ['baseline: `GET /api/auth/me` (session check, no search)', 'ME'],
      ['everything, newest first (page 1)', ''],
      ['text "hum"', 'q=hum'],
      ['text "power supply 60"', `q=${encodeURIComponent('power supply 60')}`],
      ['text prefix "whin"', 'q=whin'],
      ['tag "whine"', 'tag=whine'],
      ['two tags "hum" + "loopable"', 'tag=hum&tag=loopable'],
      ['one device', `sourceId=${fanId}`],
      ['kind + LUFS range + duration', 'sourceKind=power-supply&minLufs=-30&maxLufs=-18&minDuration=5&maxDuration=60'],
      ['true-peak range, sorted by loudness', 'minTruePeak=-12&maxTruePeak=-3&sort=integratedLufs&order=desc'],
      ['hum = 60 Hz', 'hum=60'],
      ['no hum, sorted by noise floor', 'hum=none&sort=noiseFloor'],
      ['sorted by title', 'sort=title'],
      ['sorted by loudness, ascending', 'sort=integratedLufs&order=asc'],
      ['sorted by capture session', 'sort=session'],
      ['deep page 100', 'page=100'],
      ['session + uploader', `sessionId=${anySession}&uploaderId=${anyUploader}`],
      ['text + kind + LUFS + no hum, by true peak', `q=whine&sourceKind=display&minLufs=-40&hum=none&sort=truePeak`],
      ['text + 48 kHz stereo + duration', 'q=drone&sampleRate=48000&channels=2&minDuration=30'],
    ]

    const loadBefore = os.loadavg()[0]
    const results: { name: string; qs: string; p50: number; p95: number; matches: number }[] = []
    for (const [name, qs] of queries) {
      const url = qs === 'ME' ? `${server.url}/api/auth/me` : `${server.url}/api/takes${qs ? `?${qs}` : ''}`
      let matches = 0
      const times: number[] = []
      for (let i = 0; i < WARMUP + RUNS; i++) {
        const t0 = performance.now()
        const res = await fetch(url, { headers })
        const body = (await res.json()) as { total?: number }
        const ms = performance.now() - t0
        if (res.status !== 200) throw new Error(`${name}: ${res.status} ${JSON.stringify(body)}`)
        matches = body.total ?? 0
        if (i >= WARMUP) times.push(ms)
      }
      const r = { name, qs, p50: quantile(times, 0.5), p95: quantile(times, 0.95), matches }
      results.push(r)
      console.log(
        `${name.padEnd(48)} p50 ${r.p50.toFixed(1).padStart(6)} ms   p95 ${r.p95.toFixed(1).padStart(6)} ms   ${r.matches} matches`,
      )
    }

    const similar = await similarRow(server.url, headers, TAKES, RUNS, WARMUP, quantile)
    console.log(
      `${similar.name.padEnd(48)} p50 ${similar.p50.toFixed(1).padStart(6)} ms   p95 ${similar.p95.toFixed(1).padStart(6)} ms   (target p95 < 100 ms)`,
    )

    const loadAfter = os.loadavg()[0]
    const target = 50
    const misses = results.filter((r) => r.qs !== 'ME' && r.p95 >= target)
    const cpu = os.cpus()[0]?.model.trim() ?? 'unknown CPU'
    const md = [
      '# Library search benchmark',
      '',
      `Generated by \`npm run bench:library\` on ${new Date().toISOString().slice(0, 10)}; Node ${process.version}, ${os.cpus().length} × ${cpu}.`,
      `${TAKES.toLocaleString('en')} takes (500 capture sessions, ${sourceCount} devices, tags, states, bext descriptions, measurements) in a temporary SQLite file.`,
      `The server runs as its own process (\`server/main.ts\`). Each query is one \`GET /api/takes\` through HTTP on loopback (page size 50, full take objects), run ${RUNS} times after ${WARMUP} warm-up runs; times are wall-clock per request as the client sees it.`,
      `Machine load (1-minute average) ${loadBefore.toFixed(1)} before and ${loadAfter.toFixed(1)} after the timed runs, on ${os.cpus().length} cores.`,
      `Target: p95 under ${target} ms. ${misses.length ? `Missed by: ${misses.map((m) => m.name).join(', ')}.` : 'Every query meets it.'}`,
      '',
      '| query | parameters | p50 (ms) | p95 (ms) | matches |',
      '| --- | --- | ---: | ---: | ---: |',
      ...results.map((r) =>
        r.qs === 'ME'
          ? `| ${r.name} | | ${r.p50.toFixed(1)} | ${r.p95.toFixed(1)} | |`
          : `| ${r.name} | \`${r.qs || '(none)'}\` | ${r.p50.toFixed(1)} | ${r.p95.toFixed(1)} | ${r.matches.toLocaleString('en')} |`,
      ),
      `| ${similar.name} (target p95 < 100 ms) | \`${similar.qs}\` | ${similar.p50.toFixed(1)} | ${similar.p95.toFixed(1)} | ${similar.matches} |`,
      '',
    ].join('\n')
    fs.mkdirSync(path.dirname(resultsFile), { recursive: true })
    fs.writeFileSync(resultsFile, md)
    console.log(`\nwrote ${path.relative(root, resultsFile)}`)
  } finally {
    await server.stop()
    fs.rmSync(dir, { recursive: true, force: true })
  }
}

await main()
