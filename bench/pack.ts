// `npm run bench:pack`: builds a pack of about 1 GB of source audio (12 takes
// of 5 minutes, 48 kHz 24-bit stereo) with the real build job, three times
// (the job's choice of render threads, then one worker thread, then none),
// times `zip -0` (Info-ZIP, no compression) of the same rendered files in the
// same run, builds one 60-minute take to show memory does not grow with an
// item's length, and writes bench/results/pack.md.
//
// Each build is asked for by a child of this script (the job side: a fresh
// database and storage folder, the takes hard-linked into storage and recorded
// as measured, with levels from one analysis of each file kept beside the
// files), which calls the 'build-pack' job's runBuild directly; runBuild runs
// the pack-build task on the audio-task pool, as the server does (the zip on
// one thread, the items rendering on others). Seconds: the build as the job
// sees it, measured inside the child. Peak memory: the child's own peak
// resident memory (getrusage, all its threads: the build now runs inside the
// process that runs the job), and the same by /usr/bin/time -v.
// The rendered files are then unpacked from the build's zip and handed to
// `zip -0`, warm in the page cache like the build's sources were.
// Sources are made by sox once and kept in bench/.data/pack/ (git-ignored).
import { execFileSync, spawnSync } from 'node:child_process'
import {
  existsSync,
  linkSync,
  mkdirSync,
  mkdtempSync,
  readdirSync,
  readFileSync,
  renameSync,
  rmSync,
  statSync,
  writeFileSync,
  copyFileSync,
} from 'node:fs'
import { availableParallelism, tmpdir } from 'node:os'
import { dirname, join, relative } from 'node:path'
import { fileURLToPath } from 'node:url'

const root = join(dirname(fileURLToPath(import.meta.url)), '..')
const dataDir = join(root, 'bench', '.data', 'pack')
const resultsFile = join(root, 'bench', 'results', 'pack.md')
const TIME = '/usr/bin/time'
const TAKES = 12
const MINUTES = 5
const ROUNDS = 3

interface Levels {
  file: string
  frames: number
  integratedLufs: number | null
  truePeakDbtp: number | null
  loudnessRangeLu: number | null
}

interface ChildReport {
  buildSeconds: number
  zipPath: string
  zipBytes: number
  sourceBytes: number
  items: number
  workers: number
  /** Peak resident memory of the build process (all its threads), as it reported it. */
  buildRssMb: number
}

/** One 60-minute take (the same file bench:analyze uses): memory must not grow with an item's length. */
function makeLongSource(): string {
  const file = join(root, 'bench', '.data', 'take-60min-48k24.wav')
  if (existsSync(file)) return file
  mkdirSync(dirname(file), { recursive: true })
  process.stdout.write(`generating ${relative(root, file)} with sox…\n`)
  const tmp = `${file}.part.wav`
  execFileSync('sox', [
    '-n',
    '-r',
    '48000',
    '-b',
    '24',
    '-c',
    '2',
    tmp,
    'synth',
    '3600',
    'pinknoise',
    'synth',
    'sine',
    'mix',
    '1000',
    'synth',
    'sine',
    'mix',
    '50',
    'vol',
    '-16dB',
  ])
  renameSync(tmp, file)
  return file
}

function makeSources(): string[] {
  mkdirSync(dataDir, { recursive: true })
  const files: string[] = []
  for (let i = 0; i < TAKES; i++) {
    const file = join(dataDir, `take-${String(i + 1).padStart(2, '0')}-5min-48k24.wav`)
    files.push(file)
    if (existsSync(file)) continue
    process.stdout.write(`generating ${relative(root, file)} with sox…\n`)
    const tmp = `${file}.part.wav`
    // Pink noise with a tone and mains hum at a different level per take.
    const hz = 200 + 150 * i
    execFileSync('sox', [
      '-n',
      '-r',
      '48000',
      '-b',
      '24',
      '-c',
      '2',
      tmp,
      'synth',
      String(MINUTES * 60),
      'pinknoise',
      'synth',
      'sine',
      'mix',
      String(hz),
      'synth',
      'sine',
      'mix',
      '50',
      'vol',
      `-${14 + i}dB`,
    ])
    renameSync(tmp, file)
  }
  return files
}

/** The engine's measurement of each source, once (it is what ingest stores with a take). */
async function levelsOf(files: string[], cache: string): Promise<Levels[]> {
  if (existsSync(cache)) {
    const kept = JSON.parse(readFileSync(cache, 'utf8')) as Levels[]
    if (kept.length === files.length && kept.every((l, i) => l.file === relative(root, files[i]))) return kept
  }
  const { analyzeFile } = await import('../server/audio/analyze')
  const out: Levels[] = []
  for (const f of files) {
    process.stdout.write(`measuring ${relative(root, f)}…\n`)
    const { format, analysis } = await analyzeFile(f)
    out.push({
      file: relative(root, f),
      frames: format.frames,
      integratedLufs: analysis.loudness.integratedLufs,
      truePeakDbtp: analysis.levels.truePeakDbtp,
      loudnessRangeLu: analysis.loudness.loudnessRangeLu,
    })
  }
  writeFileSync(cache, JSON.stringify(out, null, 2))
  return out
}

/** Child mode: `tsx bench/pack.ts --child WORKDIR LEVELS.json` builds a pack of those takes in this process. */
async function child(work: string, levelsFile: string): Promise<void> {
  const { loadConfig } = await import('../server/core/config')
  const { migrateToLatest, openDatabase } = await import('../server/core/database')
  const { Storage } = await import('../server/core/storage')
  const { JobRunner } = await import('../server/jobs/job-runner')
  const { seedDemo } = await import('../server/demo/seed')
  const { addItems } = await import('../server/packs/curation/packs.service')
  const { requestBuild } = await import('../server/packs/builds/builds.service')
  const { runBuild } = await import('../server/packs/builds/build.job')
  const { probeWav } = await import('../server/audio/wav-reader')
  const { createHeavyWork } = await import('../server/core/heavy-work')
  type Ctx = import('../server/core/context').AppContext

  const levels = JSON.parse(readFileSync(levelsFile, 'utf8')) as Levels[]
  const config = loadConfig(
    {},
    {
      dbFile: join(work, 'db.sqlite'),
      storageDir: join(work, 'storage'),
      demo: true,
      demoAudio: false,
      runJobs: false,
    },
  )
  const db = openDatabase(config.dbFile)
  await migrateToLatest(db)
  const storage = new Storage(config.storageDir)
  const mailer = { send: async () => undefined, describe: () => 'none', close: async () => undefined }
  const ctx: Ctx = { config, db, mailer, storage, jobs: new JobRunner(db, {}), heavy: createHeavyWork() }
  await seedDemo(ctx)
  const designer = await db
    .selectFrom('users')
    .select(['id', 'email', 'name', 'role'])
    .where('role', '=', 'designer')
    .executeTakeFirstOrThrow()
  const user = { ...designer, role: 'designer' as const }
  const session = await db
    .insertInto('capture_sessions')
    .values({ title: 'Benchmark capture', date: '2026-12-01' })
    .returning('id')
    .executeTakeFirstOrThrow()
  const takeIds: number[] = []
  let sourceBytes = 0
  for (const [i, l] of levels.entries()) {
    const src = join(root, l.file)
    const sha = `${String(i).padStart(2, '0')}${'0'.repeat(62)}`
    const rel = storage.audioRelative(sha)
    mkdirSync(dirname(storage.abs(rel)), { recursive: true })
    try {
      linkSync(src, storage.abs(rel))
    } catch {
      copyFileSync(src, storage.abs(rel))
    }
    const info = await probeWav(src)
    sourceBytes += statSync(src).size
    const t = await db
      .insertInto('takes')
      .values({
        session_id: session.id,
        filename: l.file.split('/').pop()!,
        title: `Bench take ${i + 1}`,
        audio_path: rel,
        size_bytes: statSync(src).size,
        sha256: sha,
        status: 'ready',
        format_json: JSON.stringify(info.format),
        duration_seconds: info.format.durationSeconds,
        sample_rate: info.format.sampleRate,
        channels: info.format.channels,
        bits_per_sample: info.format.bitsPerSample,
        integrated_lufs: l.integratedLufs,
        true_peak_dbtp: l.truePeakDbtp,
        loudness_range_lu: l.loudnessRangeLu,
      })
      .returning('id')
      .executeTakeFirstOrThrow()
    takeIds.push(t.id)
  }
  const pack = await db
    .insertInto('packs')
    .values({
      name: 'Benchmark pack',
      naming_template: '{title}_{index}',
      settings_json: JSON.stringify({}),
      created_by: user.id,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  await addItems(
    ctx,
    user,
    pack.id,
    takeIds.map((takeId) => ({ takeId, kind: 'one-shot' as const })),
  )
  const build = await requestBuild(ctx, user, pack.id)
  const t0 = performance.now()
  // BENCH_PACK_WORKERS=N renders N items at once on the pool; unset: what the job chooses.
  const forced = process.env.BENCH_PACK_WORKERS
  const built = await runBuild(
    ctx,
    build.id,
    new AbortController().signal,
    forced === undefined ? {} : { renderThreads: Number(forced) },
  )
  const buildSeconds = (performance.now() - t0) / 1000
  if (!built) throw new Error('the build did not run')
  const row = await db.selectFrom('pack_builds').selectAll().where('id', '=', build.id).executeTakeFirstOrThrow()
  if (row.status !== 'done') throw new Error(`build ended ${row.status}: ${row.error}`)
  await db.destroy()
  const report: ChildReport = {
    buildSeconds,
    zipPath: storage.abs(row.zip_path!),
    zipBytes: row.size_bytes!,
    sourceBytes,
    items: levels.length,
    workers: built.renderThreads,
    buildRssMb: built.maxRssKb / 1024,
  }
  process.stdout.write(`${JSON.stringify(report)}\n`)
}

function timed(
  cmd: string,
  args: string[],
  cwd = root,
  env: NodeJS.ProcessEnv = process.env,
): { seconds: number; maxRssMb: number; stdout: string } {
  const t0 = performance.now()
  const r = spawnSync(TIME, ['-v', cmd, ...args], { encoding: 'utf8', maxBuffer: 1 << 28, cwd, env })
  const seconds = (performance.now() - t0) / 1000
  if (r.status !== 0) throw new Error(`${cmd} failed (${r.status}): ${r.stderr.slice(-3000)}`)
  const rss = /Maximum resident set size \(kbytes\): (\d+)/.exec(r.stderr)
  if (!rss) throw new Error(`no memory figure from ${TIME}`)
  return { seconds, maxRssMb: Number(rss[1]) / 1024, stdout: r.stdout }
}

// Before each timed step (untimed): the inputs in the page cache, and no writeback of earlier
// steps' files (the unpacked renders, a previous zip) left pending to compete with it.
const warm = (files: string[]) => {
  execFileSync('sh', ['-c', 'cat "$@" > /dev/null', 'sh', ...files])
  execFileSync('sync')
}

async function main(): Promise<void> {
  if (process.argv[2] === '--child') return child(process.argv[3], process.argv[4])
  if (!existsSync(TIME)) throw new Error(`${TIME} is missing: install the Debian package "time"`)
  const files = makeSources()
  const long = makeLongSource()
  mkdirSync(dataDir, { recursive: true })
  const packLevels = join(dataDir, 'levels.json')
  const longLevels = join(dataDir, 'levels-60min.json')
  await levelsOf(files, packLevels)
  await levelsOf([long], longLevels)
  const self = fileURLToPath(import.meta.url)
  const work = mkdtempSync(join(tmpdir(), 'strayfield-bench-pack-'))
  const mb = (b: number) => b / 1e6
  try {
    const build = (label: string, levelsFile: string, sources: string[], workers: string | undefined) => {
      const dir = mkdtempSync(join(work, 'build-'))
      warm(sources)
      const env = { ...process.env }
      if (workers === undefined) delete env.BENCH_PACK_WORKERS
      else env.BENCH_PACK_WORKERS = workers
      const run = timed(process.execPath, ['--import', 'tsx', self, '--child', dir, levelsFile], root, env)
      const report = JSON.parse(run.stdout.trim().split('\n').pop()!) as ChildReport
      process.stdout.write(
        `${label}: ${report.buildSeconds.toFixed(1)} s, build process ${report.buildRssMb.toFixed(0)} MB, job side ${run.maxRssMb.toFixed(0)} MB, ${report.workers} render thread(s)\n`,
      )
      return { label, dir, report, maxRssMb: run.maxRssMb }
    }
    // Rounds interleave a build (the job's own choice of render threads) with `zip -0` of the same
    // rendered files; each keeps its fastest round, so a burst of other work on this shared
    // machine does not decide the ratio (every round is listed as well). The first build's zip
    // gives the rendered files. Then one build each with one render worker thread and with none.
    const label = `${TAKES} × ${MINUTES} min`
    const unpacked = join(work, 'unpacked')
    const first = build(label, packLevels, files, undefined)
    execFileSync('unzip', ['-q', first.report.zipPath, '-d', unpacked])
    rmSync(first.dir, { recursive: true, force: true })
    const wavs = readdirSync(unpacked)
      .filter((f) => f.endsWith('.wav'))
      .sort()
    const renderedBytes = wavs.reduce((n, f) => n + statSync(join(unpacked, f)).size, 0)
    const zip0 = (): number => {
      warm(wavs.map((f) => join(unpacked, f)))
      const t = timed('zip', ['-0', '-q', join(work, 'zip0.zip'), ...wavs], unpacked)
      rmSync(join(work, 'zip0.zip'), { force: true })
      process.stdout.write(`zip -0: ${t.seconds.toFixed(1)} s\n`)
      return t.seconds
    }
    const rounds = [{ run: first, zipSeconds: zip0() }]
    while (rounds.length < ROUNDS) {
      const run = build(label, packLevels, files, undefined)
      rmSync(run.dir, { recursive: true, force: true })
      rounds.push({ run, zipSeconds: zip0() })
    }
    rmSync(unpacked, { recursive: true, force: true })
    const forced = ['1', '0'].map((w) => {
      const run = build(label, packLevels, files, w)
      rmSync(run.dir, { recursive: true, force: true })
      return run
    })
    const longRun = build('1 × 60 min', longLevels, [long], undefined)
    rmSync(longRun.dir, { recursive: true, force: true })

    const bestZip = Math.min(...rounds.map((r) => r.zipSeconds))
    const best = rounds.map((r) => r.run).reduce((a, b) => (b.report.buildSeconds < a.report.buildSeconds ? b : a))
    // The job's choice: its fastest round, and the largest peak memory of all its rounds.
    const chosen = {
      ...best,
      label: `${label} (best of ${ROUNDS})`,
      report: { ...best.report, buildRssMb: Math.max(...rounds.map((r) => r.run.report.buildRssMb)) },
      maxRssMb: Math.max(...rounds.map((r) => r.run.maxRssMb)),
    }
    const row = (r: { label: string; report: ChildReport; maxRssMb: number }, zipSeconds: number | null) =>
      `| ${r.label} | ${(mb(r.report.sourceBytes) / 1000).toFixed(2)} GB | ${r.report.workers === 0 ? 'none (its own thread)' : `${r.report.workers} worker${r.report.workers > 1 ? 's' : ''}`} | ` +
      `${r.report.buildSeconds.toFixed(1)} | ${(mb(r.report.sourceBytes) / r.report.buildSeconds).toFixed(0)} MB/s | ${r.report.buildRssMb.toFixed(0)} MB | ${r.maxRssMb.toFixed(0)} MB | ` +
      `${zipSeconds === null ? '—' : zipSeconds.toFixed(1)} | ${zipSeconds === null ? '—' : `**${(r.report.buildSeconds / zipSeconds).toFixed(2)}**`} |`
    const cpu = execFileSync('sh', ['-c', "grep -m1 'model name' /proc/cpuinfo | cut -d: -f2"], {
      encoding: 'utf8',
    }).trim()
    const load = readFileSync('/proc/loadavg', 'utf8').split(' ').slice(0, 3).join(' ')
    const md = [
      '# Pack build benchmark',
      '',
      `Generated by \`npm run bench:pack\` on ${new Date().toISOString().slice(0, 10)}; Node ${process.version}, ${availableParallelism()} × ${cpu}, load average at the end ${load}.`,
      `Sources: sox pink noise with a tone and 50 Hz hum, 48 kHz 24-bit stereo: ${TAKES} takes of ${MINUTES} minutes, and one take of 60 minutes. The build renders`,
      'each to −18 LUFS under a −1 dBTP ceiling at 24 bits (TPDF dither, 5 ms fades), measures loudness, range and true peak on the samples it',
      'writes, patches bext, and stores all with manifest.json, manifest.csv and LICENSE.txt in one zip (archiver, store), fsynced.',
      "The build runs as one task on the job process's audio-task pool (server/work/audio-tasks.ts): that thread writes the zip while the pool's other threads render.",
      'Build seconds: from the job asking for the build to the zip in place; throughput: source megabytes per build second.',
      "Peak memory: the job's whole process (database, job, tsx and every thread of the pool), by getrusage inside it and by `/usr/bin/time -v` from outside.",
      `\`zip -0\`: Info-ZIP storing the same rendered files (${(mb(renderedBytes) / 1000).toFixed(2)} GB), warm in the page cache.`,
      `Render threads: the job's choice (two on two cores or more, for a build this large), fastest of ${ROUNDS} rounds interleaved with \`zip -0\` (its peak memory the largest of`,
      'the rounds; the ratio fastest build ÷ fastest zip -0); then one build forced to one worker thread and one to none.',
      'Targets: build ÷ zip -0 < 2, peak memory of the build < 200 MB (set when the build ran in a process of its own, without the job side).',
      '',
      '| pack | source audio | render threads | build seconds | throughput | peak memory, job process (getrusage) | (time -v) | zip -0 seconds | build ÷ zip -0 |',
      '| --- | ---: | --- | ---: | ---: | ---: | ---: | ---: | ---: |',
      row(chosen, bestZip),
      ...forced.map((r) => row(r, bestZip)),
      row(longRun, null),
      '',
      `Every round of the job's choice (build, then \`zip -0\`):`,
      '',
      '| round | build seconds | peak memory, job process | zip -0 seconds | build ÷ zip -0 |',
      '| ---: | ---: | ---: | ---: | ---: |',
      ...rounds.map(
        (r, i) =>
          `| ${i + 1} | ${r.run.report.buildSeconds.toFixed(1)} | ${r.run.report.buildRssMb.toFixed(0)} MB | ${r.zipSeconds.toFixed(1)} | ${(r.run.report.buildSeconds / r.zipSeconds).toFixed(2)} |`,
      ),
      '',
    ].join('\n')
    process.stdout.write(`\n${md}\n`)
    mkdirSync(dirname(resultsFile), { recursive: true })
    writeFileSync(resultsFile, md)
    process.stdout.write(`wrote ${relative(root, resultsFile)}\n`)
  } finally {
    rmSync(work, { recursive: true, force: true })
  }
}

await main()
