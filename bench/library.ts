// `npm run bench:library`: seeds a library of takes with varied metadata into
// a SQLite file, starts the real server on it, and times typical library
// searches and filters through the HTTP API (p50/p95 over 100 runs after a
// warm-up), at each library size in BENCH_TAKES (default 50,000 and
// 1,000,000). Prints one table with a column group per size and writes it to
// bench/results/library.md.
//
// Rows go in through Kysely in big transactions; the full-text index is
// filled by the same triggers that keep it current in production. The server
// under test then runs as its own process (`server/main.ts`, as `npm start`
// runs it), so the client's work is not counted against it.
//
// Seeding a million takes takes ten minutes or more; keep the files to reuse
// them: BENCH_DB_DIR=dir keeps one `library-<takes>.sqlite` per size there
// (BENCH_DB=file does the same for a single size). A kept file is migrated on
// reuse like any database, so new indexes are built on it first.
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

const SIZES = (process.env.BENCH_TAKES ?? '50000,1000000').split(',').map((n) => Number(n.replace(/_/g, '')))
const RUNS = Number(process.env.BENCH_RUNS ?? 100)
const WARMUP = 10
const root = path.join(path.dirname(fileURLToPath(import.meta.url)), '..')
const resultsFile = path.join(root, 'bench', 'results', 'library.md')

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

async function seed(db: Db, takes: number): Promise<void> {
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
    process.stdout.write(
      `\rseeded ${Math.min(takes, start + 5000)} / ${takes} takes (${((Date.now() - t0) / 1000).toFixed(0)} s)`,
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

// ---- the queries ----

/** Ids the queries name, looked up in each seeded library (the same in every size, which is seeded alike). */
interface Known {
  fanId: number
  anySession: number
  anyUploader: number
}

interface Answer {
  total?: number
  totalCapped?: boolean
}

/**
 * One row of the table. To time another kind of request, add a row: `path`
 * builds its path and query string from the library's known ids, `matches`
 * reads the count the table shows from its JSON answer.
 */
interface BenchQuery {
  name: string
  path: (k: Known) => string
  matches?: (body: Answer) => string
}

/** A page's total as the library shows it: counts stop at a cap, beyond which the answer says "more". */
const pageTotal = (body: Answer) => `${(body.total ?? 0).toLocaleString('en')}${body.totalCapped ? '+' : ''}`
const search = (name: string, qs: string | ((k: Known) => string)): BenchQuery => ({
  name,
  path: (k) => {
    const s = typeof qs === 'string' ? qs : qs(k)
    return `/api/takes${s ? `?${s}` : ''}`
  },
  matches: pageTotal,
})

const QUERIES: BenchQuery[] = [
  { name: 'baseline: `GET /api/auth/me` (session check, no search)', path: () => '/api/auth/me' },
  search('everything, newest first (page 1)', ''),
  search('text "hum"', 'q=hum'),
  search('text "power supply 60"', `q=${encodeURIComponent('power supply 60')}`),
  search('text prefix "whin"', 'q=whin'),
  search('tag "whine"', 'tag=whine'),
  search('two tags "hum" + "loopable"', 'tag=hum&tag=loopable'),
  search('one device', (k) => `sourceId=${k.fanId}`),
  search(
    'kind + LUFS range + duration',
    'sourceKind=power-supply&minLufs=-30&maxLufs=-18&minDuration=5&maxDuration=60',
  ),
  search('true-peak range, sorted by loudness', 'minTruePeak=-12&maxTruePeak=-3&sort=integratedLufs&order=desc'),
  search('hum = 60 Hz', 'hum=60'),
  search('no hum, sorted by noise floor', 'hum=none&sort=noiseFloor'),
  search('sorted by title', 'sort=title'),
  search('sorted by loudness, ascending', 'sort=integratedLufs&order=asc'),
  search('sorted by capture session', 'sort=session'),
  search('deep page 100', 'page=100'),
  search('session + uploader', (k) => `sessionId=${k.anySession}&uploaderId=${k.anyUploader}`),
  search('text + kind + LUFS + no hum, by true peak', 'q=whine&sourceKind=display&minLufs=-40&hum=none&sort=truePeak'),
  search('text + 48 kHz stereo + duration', 'q=drone&sampleRate=48000&channels=2&minDuration=30'),
]

// ---- one library size ----

interface Timed {
  path: string
  p50: number
  p95: number
  matches: string
}

interface SizeResult {
  takes: number
  sourceCount: number
  loadBefore: number
  loadAfter: number
  timed: Map<string, Timed>
}

/** Where a size's database lives: kept (BENCH_DB, BENCH_DB_DIR) or in the run's temporary folder. */
function databaseFile(takes: number, tmp: string): string {
  if (process.env.BENCH_DB) {
    if (SIZES.length > 1) throw new Error('BENCH_DB names one file: use it with one size, or BENCH_DB_DIR for several')
    return path.resolve(process.env.BENCH_DB)
  }
  const dir = process.env.BENCH_DB_DIR ? path.resolve(process.env.BENCH_DB_DIR) : tmp
  fs.mkdirSync(dir, { recursive: true })
  return path.join(dir, `library-${takes}.sqlite`)
}

async function benchSize(takes: number, tmp: string): Promise<SizeResult> {
  const dbFile = databaseFile(takes, tmp)
  const reuse = fs.existsSync(dbFile)
  const storageDir = path.join(tmp, `storage-${takes}`)

  // Migrate, create the demo team and seed, through the app's own start-up; then close.
  console.log(`\n${takes.toLocaleString('en')} takes: ${reuse ? `reusing ${dbFile}` : `seeding ${dbFile}`}`)
  const seeder = await startServer(
    { port: 0, dbFile, storageDir, demo: true, demoAudio: false, runJobs: false, clientDir: path.join(tmp, 'none') },
    { ...process.env, SMTP_URL: '', SESSION_SECRET: '' },
  )
  const db = seeder.ctx.db
  if (!reuse) await seed(db, takes)
  const sourceCount = Number(
    (
      await db
        .selectFrom('sources')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )
  const known: Known = {
    anySession: (
      await db.selectFrom('capture_sessions').select('id').orderBy('id').limit(1).offset(41).executeTakeFirstOrThrow()
    ).id,
    anyUploader: (
      await db.selectFrom('users').select('id').where('email', '=', 'recordist@example.test').executeTakeFirstOrThrow()
    ).id,
    fanId: (await db.selectFrom('sources').select('id').where('name', '=', 'Desk fan 3').executeTakeFirstOrThrow()).id,
  }
  await seeder.stop()

  const server = await serve(dbFile, storageDir)
  try {
    const headers = await signIn(server.url)
    const loadBefore = os.loadavg()[0]
    const timed = new Map<string, Timed>()
    for (const query of QUERIES) {
      const url = `${server.url}${query.path(known)}`
      let body: Answer = {}
      const times: number[] = []
      for (let i = 0; i < WARMUP + RUNS; i++) {
        const t0 = performance.now()
        const res = await fetch(url, { headers })
        body = (await res.json()) as Answer
        const ms = performance.now() - t0
        if (res.status !== 200) throw new Error(`${query.name}: ${res.status} ${JSON.stringify(body)}`)
        if (i >= WARMUP) times.push(ms)
      }
      const r = {
        path: query.path(known),
        p50: quantile(times, 0.5),
        p95: quantile(times, 0.95),
        matches: query.matches?.(body) ?? '',
      }
      timed.set(query.name, r)
      console.log(
        `${query.name.padEnd(48)} p50 ${r.p50.toFixed(1).padStart(6)} ms   p95 ${r.p95.toFixed(1).padStart(6)} ms   ${r.matches}`,
      )
    }
    return { takes, sourceCount, loadBefore, loadAfter: os.loadavg()[0], timed }
  } finally {
    await server.stop()
  }
}

// ---- the table ----

const TARGET_MS = 100

function table(sizes: SizeResult[]): string {
  const n = (x: number) => x.toLocaleString('en')
  const params = (p: string) => (p.includes('?') ? `\`${p.slice(p.indexOf('?') + 1)}\`` : '')
  const head = ['query', 'parameters', ...sizes.flatMap((s) => [`p50 ms · ${n(s.takes)}`, 'p95 ms', 'matches'])]
  const align = ['---', '---', ...sizes.flatMap(() => ['---:', '---:', '---:'])]
  const rows = QUERIES.map((q) => {
    const first = sizes[0].timed.get(q.name)!
    const cells = sizes.flatMap((s) => {
      const t = s.timed.get(q.name)!
      return [t.p50.toFixed(1), t.p95.toFixed(1), t.matches]
    })
    return [q.name, params(first.path), ...cells]
  })
  return [head, align, ...rows].map((r) => `| ${r.join(' | ')} |`).join('\n')
}

async function main(): Promise<void> {
  const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-bench-'))
  try {
    const sizes: SizeResult[] = []
    for (const takes of SIZES) sizes.push(await benchSize(takes, tmp))

    const searches = QUERIES.filter((q) => q.matches)
    const misses = sizes.flatMap((s) =>
      searches
        .filter((q) => s.timed.get(q.name)!.p95 >= TARGET_MS)
        .map((q) => `${q.name} at ${s.takes.toLocaleString('en')}`),
    )
    const cpu = os.cpus()[0]?.model.trim() ?? 'unknown CPU'
    const md = [
      '# Library search benchmark',
      '',
      `Generated by \`npm run bench:library\` on ${new Date().toISOString().slice(0, 10)}; Node ${process.version}, ${os.cpus().length} × ${cpu}.`,
      `Libraries of ${sizes.map((s) => s.takes.toLocaleString('en')).join(' and ')} takes (500 capture sessions, ${sizes[0].sourceCount} devices, tags, states, bext descriptions, measurements) in SQLite files; the smaller is the start of the larger.`,
      `The server runs as its own process (\`server/main.ts\`). Each query is one request through HTTP on loopback (page size 50, full take objects), run ${RUNS} times after ${WARMUP} warm-up runs; times are wall-clock per request as the client sees it. Matches: the page's total ("+": more than that; counts stop there).`,
      `Machine load (1-minute average, ${os.cpus().length} cores) before and after the timed runs: ${sizes.map((s) => `${s.loadBefore.toFixed(1)} and ${s.loadAfter.toFixed(1)} at ${s.takes.toLocaleString('en')} takes`).join('; ')}.`,
      `Target: p95 under ${TARGET_MS} ms at every size. ${misses.length ? `Missed by: ${misses.join(', ')}.` : 'Every query meets it.'}`,
      '',
      table(sizes),
      '',
    ].join('\n')
    console.log(`\n${md}`)
    fs.mkdirSync(path.dirname(resultsFile), { recursive: true })
    fs.writeFileSync(resultsFile, md)
    console.log(`wrote ${path.relative(root, resultsFile)}`)
  } finally {
    fs.rmSync(tmp, { recursive: true, force: true })
  }
}

await main()
