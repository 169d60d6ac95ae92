// `npm run --silent analyze` as a user runs it. Its JSON is validated with the
// shared zod schema (AnalyzeCliResult), and its loudness is held against
// ffmpeg's ebur128 reading of the same sox-generated files (±0.1 LU, EBU Tech
// 3341 §2.9).
import { spawnSync } from 'node:child_process'
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { basename, join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { z } from 'zod'
import { AnalyzeCliResult } from '@shared/schemas/analysis'
import { ffmpegEbur128, sox } from '../helpers/reference-tools'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-cli-'))
const tone = join(dir, 'tone-44k1.wav')
const noise = join(dir, 'noise-96k.wav')
const text = join(dir, 'notes.wav')
const missing = join(dir, 'missing.wav')

function cli(...args: string[]) {
  const r = spawnSync('npm', ['run', '--silent', 'analyze', '--', ...args], { cwd: process.cwd(), encoding: 'utf8' })
  return { status: r.status, stdout: r.stdout, stderr: r.stderr }
}

beforeAll(() => {
  sox(['-n', '-r', '44100', '-b', '16', '-c', '2', tone, 'synth', '6', 'sine', '1000', 'vol', '-23dB'])
  sox([
    '-n',
    '-r',
    '96000',
    '-e',
    'floating-point',
    '-b',
    '32',
    '-c',
    '1',
    noise,
    'synth',
    '5',
    'pinknoise',
    'vol',
    '-20dB',
  ])
  writeFileSync(text, 'not a take\n')
})
afterAll(() => rmSync(dir, { recursive: true, force: true }))

describe('analyze CLI', () => {
  it('--json prints only a schema-valid array, one element per file, and exits 1 when one failed', () => {
    const r = cli('--json', tone, noise, text, missing)
    expect(r.status).toBe(1)
    const results = z.array(AnalyzeCliResult).parse(JSON.parse(r.stdout))
    expect(results.map((x) => x.file)).toEqual([tone, noise, text, missing])
    const [a, b, c, d] = results
    if (!a.ok || !b.ok || c.ok || d.ok) throw new Error('unexpected ok flags')
    expect(a.format).toMatchObject({ sampleRate: 44100, channels: 2, bitsPerSample: 16, encoding: 'pcm' })
    expect(b.format).toMatchObject({ sampleRate: 96000, channels: 1, bitsPerSample: 32, encoding: 'float' })
    for (const [res, file] of [
      [a, tone],
      [b, noise],
    ] as const) {
      expect(Math.abs(res.analysis.loudness.integratedLufs! - ffmpegEbur128(file).integratedLufs)).toBeLessThanOrEqual(
        0.1,
      )
    }
    expect(c.error.code).toBe('UNSUPPORTED_AUDIO')
    expect(c.error.message).toMatch(/not a WAVE file/)
    expect(d.error.code).toBe('NOT_FOUND')
  })

  it('--json on readable files exits 0', () => {
    const r = cli('--json', tone)
    expect(r.status).toBe(0)
    const [only] = z.array(AnalyzeCliResult).parse(JSON.parse(r.stdout))
    expect(only.ok).toBe(true)
  })

  it('without --json prints a header and one row per file, numbers to one decimal with units', () => {
    const r = cli(tone, noise, text)
    expect(r.status).toBe(1)
    const lines = r.stdout.trimEnd().split('\n')
    expect(lines).toHaveLength(4)
    expect(lines[0]).toMatch(
      /^file\s+format\s+duration\s+integrated\s+LRA\s+true peak\s+sample peak\s+RMS\s+noise floor\s+hum$/,
    )
    expect(lines[1].startsWith(basename(tone))).toBe(true)
    expect(lines[1]).toMatch(
      /44\.1 kHz 16-bit 2 ch\s+0:06\.0\s+-2[23]\.\d LUFS\s+\d+\.\d LU\s+-?\d+\.\d dBTP\s+-?\d+\.\d dBFS/,
    )
    expect(lines[2]).toMatch(/^noise-96k\.wav\s+96 kHz 32-bit float 1 ch\s+0:05\.0\s+-\d+\.\d LUFS/)
    expect(lines[3]).toMatch(/^notes\.wav\s+error UNSUPPORTED_AUDIO: not a WAVE file/)
  })

  it('without files prints usage to stderr and exits 2', () => {
    const r = cli()
    expect(r.status).toBe(2)
    expect(r.stdout).toBe('')
    expect(r.stderr).toMatch(/usage/)
  })
})
