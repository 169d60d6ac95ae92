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
import { spawn } from 'node:child_process'
import { fileURLToPath } from 'node:url'
import { startServer } from '../server/server'
import { seedLibrary } from './library-seed'
import { QUERIES, knownIds, type Answer } from './library-queries'
import { seedSimilar, similarRow } from './similar-row'

const SIZES = (process.env.BENCH_TAKES ?? '50000,1000000').split(',').map((n) => Number(n.replace(/_/g, '')))
const RUNS = Number(process.env.BENCH_RUNS ?? 100)
const WARMUP = 10
const root = path.join(path.dirname(fileURLToPath(import.meta.url)), '..')
const resultsFile = path.join(root, 'bench', 'results', 'library.md')

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
  if (!reuse) await seedLibrary(db, takes, true)
  // Sounds-like vectors only up to SIMILAR_MAX takes (the size its target is set at); a kept file gets them once.
  const withSimilar = takes <= SIMILAR_MAX
  const featureCount = async () =>
    Number(
      (
        await db
          .selectFrom('take_features')
          .select((eb) => eb.fn.countAll<number>().as('n'))
          .executeTakeFirstOrThrow()
      ).n,
    )
  if (withSimilar && (await featureCount()) === 0) await seedSimilar(db)
  const sourceCount = Number(
    (
      await db
        .selectFrom('sources')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .executeTakeFirstOrThrow()
    ).n,
  )
  const known = await knownIds(db)
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
    // More like this: its own row, timed over takes picked at random (bench/similar-row.ts).
    if (withSimilar) {
      const similar = await similarRow(server.url, headers, takes, RUNS, WARMUP, quantile)
      timed.set(SIMILAR_ROW, {
        path: `?${similar.qs}`,
        p50: similar.p50,
        p95: similar.p95,
        matches: `${similar.matches}`,
      })
      console.log(
        `${similar.name.padEnd(48)} p50 ${similar.p50.toFixed(1).padStart(6)} ms   p95 ${similar.p95.toFixed(1).padStart(6)} ms`,
      )
    }
    return { takes, sourceCount, loadBefore, loadAfter: os.loadavg()[0], timed }
  } finally {
    await server.stop()
  }
}

// ---- the table ----

const TARGET_MS = 100
/** Sounds-like search is timed up to this many takes: its target is set at 50,000 (issue 15). */
const SIMILAR_MAX = 50_000
const SIMILAR_ROW = 'similar: more like this (20 nearest)'

function table(sizes: SizeResult[]): string {
  const n = (x: number) => x.toLocaleString('en')
  const params = (p: string) => (p.includes('?') ? `\`${p.slice(p.indexOf('?') + 1)}\`` : '')
  const head = ['query', 'parameters', ...sizes.flatMap((s) => [`p50 ms · ${n(s.takes)}`, 'p95 ms', 'matches'])]
  const align = ['---', '---', ...sizes.flatMap(() => ['---:', '---:', '---:'])]
  const names = [...QUERIES.map((q) => q.name), SIMILAR_ROW]
  const rows = names.flatMap((name) => {
    const first = sizes.map((s) => s.timed.get(name)).find(Boolean)
    if (!first) return []
    const cells = sizes.flatMap((s) => {
      const t = s.timed.get(name)
      return t ? [t.p50.toFixed(1), t.p95.toFixed(1), t.matches] : ['—', '—', '']
    })
    return [[name, params(first.path), ...cells]]
  })
  return [head, align, ...rows].map((r) => `| ${r.join(' | ')} |`).join('\n')
}

async function main(): Promise<void> {
  const tmp = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-bench-'))
  try {
    const sizes: SizeResult[] = []
    for (const takes of SIZES) sizes.push(await benchSize(takes, tmp))

    const searches = [...QUERIES.filter((q) => q.matches).map((q) => q.name), SIMILAR_ROW]
    const misses = sizes.flatMap((s) =>
      searches
        .filter((name) => (s.timed.get(name)?.p95 ?? 0) >= TARGET_MS)
        .map((name) => `${name} at ${s.takes.toLocaleString('en')}`),
    )
    const cpu = os.cpus()[0]?.model.trim() ?? 'unknown CPU'
    const md = [
      '# Library search benchmark',
      '',
      `Generated by \`npm run bench:library\` on ${new Date().toISOString().slice(0, 10)}; Node ${process.version}, ${os.cpus().length} × ${cpu}.`,
      `Libraries of ${sizes.map((s) => s.takes.toLocaleString('en')).join(' and ')} takes (500 capture sessions, ${sizes[0].sourceCount} devices, tags, states, bext descriptions, measurements) in SQLite files; the smaller is the start of the larger.`,
      `The server runs as its own process (\`server/main.ts\`). Each query is one request through HTTP on loopback (page size 50, full take objects), run ${RUNS} times after ${WARMUP} warm-up runs; times are wall-clock per request as the client sees it. Matches: the page's total ("+": at least that many; counting stopped at 10,000 matches or after 20,000 takes read).`,
      `The similar row asks for the 20 nearest takes of a take picked at random each time, from seeded sound vectors (40 families), at sizes up to ${SIMILAR_MAX.toLocaleString('en')} takes (\`bench/similar-row.ts\`); "—": not timed at that size.`,
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
