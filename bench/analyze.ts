// `npm run bench:analyze`: times the full analysis (levels, loudness, true
// peak, noise floor, spectrum and the peaks file) on 10- and 60-minute
// 48 kHz 24-bit stereo takes, against ffmpeg's ebur128 meter plus sox stats
// on the same files, and writes bench/results/analyze.md.
//
// Every run is a separate process under /usr/bin/time -v, which reports its
// peak resident memory; seconds are wall-clock times of the whole process
// (ours includes starting Node), best of a few interleaved rounds. Ours runs
// bundled to plain JavaScript, as the server's worker threads run it
// (server/core/workers.ts; the bundle is made before timing), and once more
// through tsx, whose TypeScript start the older tables counted.
// The files are made by sox once and kept in bench/.data/ (git-ignored).
import { execFileSync, spawnSync } from 'node:child_process'
import { existsSync, mkdirSync, renameSync, writeFileSync } from 'node:fs'
import { loadavg } from 'node:os'
import { dirname, join, relative } from 'node:path'
import { fileURLToPath } from 'node:url'
import { workerModule } from '../server/core/workers'

const root = join(dirname(fileURLToPath(import.meta.url)), '..')
const dataDir = join(root, 'bench', '.data')
const resultsFile = join(root, 'bench', 'results', 'analyze.md')
const TIME = '/usr/bin/time'

interface Run {
  seconds: number
  maxRssMb: number
}

const childSource = new URL('./analyze-child.ts', import.meta.url)

function makeTake(minutes: number): string {
  const file = join(dataDir, `take-${minutes}min-48k24.wav`)
  if (existsSync(file)) return file
  mkdirSync(dataDir, { recursive: true })
  process.stdout.write(`generating ${relative(root, file)} with sox…\n`)
  const tmp = `${file}.part.wav`
  // Pink noise with a 1 kHz tone and 50 Hz hum mixed in: broadband, tonal and mains content.
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
    String(minutes * 60),
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

function timed(cmd: string, args: string[]): Run & { stdout: string } {
  const t0 = performance.now()
  const r = spawnSync(TIME, ['-v', cmd, ...args], { encoding: 'utf8', maxBuffer: 1 << 28, cwd: root })
  const seconds = (performance.now() - t0) / 1000
  if (r.status !== 0) throw new Error(`${cmd} failed (${r.status}): ${r.stderr.slice(-2000)}`)
  const rss = /Maximum resident set size \(kbytes\): (\d+)/.exec(r.stderr)
  if (!rss) throw new Error(`no memory figure from ${TIME}`)
  return { seconds, maxRssMb: Number(rss[1]) / 1024, stdout: r.stdout }
}

function warmCache(file: string): void {
  execFileSync('sh', ['-c', 'cat "$1" > /dev/null', 'sh', file])
}

async function main(): Promise<void> {
  const bundled = fileURLToPath(workerModule(childSource))
  if (!existsSync(TIME)) throw new Error(`${TIME} is missing: install the Debian package "time"`)
  const rows: string[] = []
  // Other work on the machine slows all three tools; the load average says how much there was.
  const load = loadavg()[0].toFixed(1)
  for (const [minutes, rounds] of [
    [10, 3],
    [60, 1],
  ]) {
    const file = makeTake(minutes)
    const audioSeconds = minutes * 60
    warmCache(file)
    const peaks = join(dataDir, `take-${minutes}min.peaks`)
    const runs = {
      ffmpeg: () =>
        timed('ffmpeg', [
          '-nostats',
          '-hide_banner',
          '-i',
          file,
          '-af',
          'ebur128=peak=true:framelog=verbose',
          '-f',
          'null',
          '-',
        ]),
      sox: () => timed('sox', [file, '-n', 'stats']),
      ours: () => timed(process.execPath, [bundled, file, peaks]),
      tsx: () => timed(process.execPath, ['--import', 'tsx', fileURLToPath(childSource), file, peaks]),
    }
    // Rounds interleave the three tools; each keeps its fastest round, so a burst of other work on
    // the machine during one run does not decide the comparison.
    const best: Record<keyof typeof runs, (Run & { stdout: string }) | null> = {
      ffmpeg: null,
      sox: null,
      ours: null,
      tsx: null,
    }
    for (let r = 0; r < rounds; r++) {
      for (const tool of Object.keys(runs) as (keyof typeof runs)[]) {
        const run = runs[tool]()
        const prev = best[tool]
        best[tool] =
          prev === null || run.seconds < prev.seconds
            ? { ...run, maxRssMb: Math.max(run.maxRssMb, prev?.maxRssMb ?? 0) }
            : { ...prev, maxRssMb: Math.max(run.maxRssMb, prev.maxRssMb) }
      }
    }
    const { ffmpeg, sox, ours, tsx } = best as Record<keyof typeof runs, Run & { stdout: string }>
    const inner = JSON.parse(ours.stdout) as { seconds: number }
    const ratio = ours.seconds / (ffmpeg.seconds + sox.seconds)
    const tsxRatio = tsx.seconds / (ffmpeg.seconds + sox.seconds)
    const name = `${relative(root, file)} (best of ${rounds})`
    const row = (tool: string, r: Run, extra = '') =>
      `| ${name} | ${tool} | ${r.seconds.toFixed(2)} | ${(audioSeconds / r.seconds).toFixed(0)}× | ${r.maxRssMb.toFixed(0)} MB | ${extra} |`
    rows.push(row('ffmpeg ebur128=peak=true', ffmpeg))
    rows.push(row('sox stats', sox))
    rows.push(
      row(
        'strayfield analyzeFile + peaks',
        ours,
        `**${ratio.toFixed(2)}** (analysis alone ${inner.seconds.toFixed(2)} s)`,
      ),
    )
    rows.push(row('strayfield, the same started through tsx', tsx, `${tsxRatio.toFixed(2)}`))
    process.stdout.write(`${rows.slice(-4).join('\n')}\n`)
  }
  const cpu = execFileSync('sh', ['-c', "grep -m1 'model name' /proc/cpuinfo | cut -d: -f2"], {
    encoding: 'utf8',
  }).trim()
  const md = [
    '# Analysis benchmark',
    '',
    `Generated by \`npm run bench:analyze\` on ${new Date().toISOString().slice(0, 10)}; Node ${process.version}, ${cpu}, load average ${load} at start.`,
    'Takes: sox pink noise with a 1 kHz tone and 50 Hz hum, 48 kHz 24-bit stereo. Seconds are wall-clock per process',
    '(ours includes starting Node), the fastest of interleaved rounds; memory is the largest peak resident set',
    "reported by `/usr/bin/time -v` over the rounds. Ours runs bundled to plain JavaScript, as the server's worker threads",
    'run the analysis (server/core/workers.ts); the last row of each take starts the same through tsx, which transpiles',
    'the TypeScript at every start (tables before 2026-12-02 evening counted that way).',
    'Ratio: our seconds ÷ (ffmpeg seconds + sox seconds). Targets: ratio ≤ 1.0 on the 10-minute take, < 200 MB on the 60-minute take.',
    '',
    '| file | tool | seconds | × realtime | peak memory | ours ÷ (ffmpeg + sox) |',
    '| --- | --- | ---: | ---: | ---: | --- |',
    ...rows,
    '',
  ].join('\n')
  mkdirSync(dirname(resultsFile), { recursive: true })
  writeFileSync(resultsFile, md)
  process.stdout.write(`\nwrote ${relative(root, resultsFile)}\n`)
}

await main()
