// `npm run --silent analyze -- [--json] FILE...`: measures WAVE files.
// With --json, stdout holds only a JSON array of AnalyzeCliResult (shared
// schema); otherwise a table with one row per file. Exit status 1 when any
// file failed. Several files go through the audio-task pool, one runs in-process.
import { basename } from 'node:path'
import type { AnalyzeCliResult, Analysis, WavFormat } from '@shared/schemas/analysis'
import { analyzeFile, type AnalyzeResult } from '../audio/analyze'
import { holdAudioTasks, runAudioTask } from '../work/audio-tasks'
import { WavFormatError } from '../audio/wav-reader'

const USAGE = 'usage: npm run --silent analyze -- [--json] FILE...'

function errorCode(err: unknown): string {
  if (err instanceof WavFormatError) return 'UNSUPPORTED_AUDIO'
  const code = (err as NodeJS.ErrnoException | null)?.code
  if (code === 'ENOENT') return 'NOT_FOUND'
  if (code === 'EISDIR') return 'NOT_A_FILE'
  if (code === 'EACCES' || code === 'EPERM') return 'PERMISSION_DENIED'
  return 'ANALYSIS_FAILED'
}

async function analyzeAll(files: string[]): Promise<AnalyzeCliResult[]> {
  const settle = (file: string, p: Promise<AnalyzeResult>): Promise<AnalyzeCliResult> =>
    p.then(
      (r) => ({ file, ok: true as const, format: r.format, analysis: r.analysis }),
      (err: unknown) => ({
        file,
        ok: false as const,
        error: { code: errorCode(err), message: err instanceof Error ? err.message : String(err) },
      }),
    )
  if (files.length === 1) return [await settle(files[0], analyzeFile(files[0]))]
  const release = holdAudioTasks()
  try {
    return await Promise.all(files.map((f) => settle(f, runAudioTask('analyze', { path: f }))))
  } finally {
    await release()
  }
}

const num = (v: number | null, unit: string) => (v === null ? '–' : `${v.toFixed(1)} ${unit}`)

function formatLabel(f: WavFormat): string {
  const khz = f.sampleRate / 1000
  const depth = f.encoding === 'float' ? `${f.bitsPerSample}-bit float` : `${f.validBitsPerSample}-bit`
  return `${Number.isInteger(khz) ? khz : khz.toFixed(1)} kHz ${depth} ${f.channels} ch`
}

function duration(seconds: number): string {
  const m = Math.floor(seconds / 60)
  const s = seconds - 60 * m
  return `${m}:${s.toFixed(1).padStart(4, '0')}`
}

function hum(a: Analysis): string {
  const h = a.spectrum.mainsHum
  return h.hz === null ? 'none' : `${h.hz} Hz (${num(h.ratioDb, 'dB')})`
}

function table(results: AnalyzeCliResult[]): string {
  const head = [
    'file',
    'format',
    'duration',
    'integrated',
    'LRA',
    'true peak',
    'sample peak',
    'RMS',
    'noise floor',
    'hum',
  ]
  const rows = results.map((r) => {
    if (!r.ok) return [basename(r.file), `error ${r.error.code}: ${r.error.message}`]
    const { levels, loudness } = r.analysis
    return [
      basename(r.file),
      formatLabel(r.format),
      duration(r.format.durationSeconds),
      num(loudness.integratedLufs, 'LUFS'),
      num(loudness.loudnessRangeLu, 'LU'),
      num(levels.truePeakDbtp, 'dBTP'),
      num(levels.samplePeakDbfs, 'dBFS'),
      num(levels.rmsDbfs, 'dBFS'),
      num(r.analysis.noiseFloorDbfs, 'dBFS'),
      hum(r.analysis),
    ]
  })
  // Widths from complete rows only; an error row runs on past the columns.
  const widths = head.map((h, i) =>
    Math.max(h.length, ...rows.filter((r) => r.length === head.length).map((r) => r[i].length)),
  )
  const line = (cells: string[]) => cells.map((c, i) => (i < cells.length - 1 ? c.padEnd(widths[i]) : c)).join('  ')
  return [line(head), ...rows.map(line)].join('\n') + '\n'
}

async function main(argv: string[]): Promise<number> {
  const json = argv.includes('--json')
  const files = argv.filter((a) => a !== '--json' && a !== '--')
  if (files.length === 0 || files.some((f) => f.startsWith('--'))) {
    process.stderr.write(`${USAGE}\n`)
    return 2
  }
  const results = await analyzeAll(files)
  process.stdout.write(json ? `${JSON.stringify(results, null, 2)}\n` : table(results))
  return results.every((r) => r.ok) ? 0 : 1
}

main(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code
  },
  (err: unknown) => {
    process.stderr.write(`${err instanceof Error ? err.stack : String(err)}\n`)
    process.exitCode = 1
  },
)
