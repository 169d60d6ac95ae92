// The one execution layer (server/work/audio-tasks.ts): real tasks on the real
// pool. Signals come from sox; expected loudness is ffmpeg's ebur128 reading of
// the same files (±0.1 LU, EBU Tech 3341 §2.9), so the pool is checked to
// return the real analysis, not just some object; a render in a thread gives
// the same bytes as in this one (GNU coreutils sha256sum).
import { execFileSync } from 'node:child_process'
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEFAULT_RENDER_SETTINGS } from '@shared/schemas/packs'
import { WavFormatError } from '../../server/audio/wav-errors'
import { renderItem, type PlainRenderRequest } from '../../server/render/render'
import { audioThreads, holdAudioTasks, runAudioTask, TaskSilent } from '../../server/work/audio-tasks'
import { ffmpegEbur128, sox } from '../helpers/reference-tools'
import { META } from '../render/render-fixtures'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-tasks-'))
const files: string[] = []
const expected: number[] = []
const long = join(dir, 'long.wav')
let release: () => Promise<void>

beforeAll(() => {
  release = holdAudioTasks(2)
  ;[-18, -26, -32].forEach((db, i) => {
    const f = join(dir, `take-${i}.wav`)
    sox(['-n', '-r', '48000', '-b', '24', '-c', '2', f, 'synth', '20', 'pinknoise', 'vol', `${db}dB`])
    files.push(f)
    expected.push(ffmpegEbur128(f).integratedLufs)
  })
  sox(['-n', '-r', '48000', '-b', '24', '-c', '2', long, 'synth', '180', 'pinknoise', 'vol', '-20dB'])
  writeFileSync(join(dir, 'not-audio.wav'), 'this is a text file, not a take\n')
})
afterAll(async () => {
  await release()
  rmSync(dir, { recursive: true, force: true })
})

function expectLufs(measured: number | null, ref: number) {
  expect(measured).not.toBeNull()
  expect(Math.abs(measured! - ref)).toBeLessThanOrEqual(0.1)
}

const renderOf = (source: string): PlainRenderRequest => ({
  sourcePath: source,
  startSeconds: 0.5,
  endSeconds: null,
  kind: 'one-shot',
  settings: { ...DEFAULT_RENDER_SETTINGS, bitDepth: 16 },
  metadata: META,
  ditherSeed: 99,
})

const sha256sum = (f: string) => execFileSync('sha256sum', [f], { encoding: 'utf8' }).split(' ')[0]

describe('audio tasks', () => {
  it('runs on one pool of at least two threads', () => {
    expect(audioThreads()).toBeGreaterThanOrEqual(2)
  })

  it('analyses several files and reports rising progress that ends at 1', async () => {
    const progress = files.map(() => [] as number[])
    const results = await Promise.all(
      files.map((path, i) =>
        runAudioTask(
          'analyze',
          { path, peaksPath: join(dir, `p${i}.peaks`) },
          { onProgress: (x) => progress[i].push(x) },
        ),
      ),
    )
    results.forEach((r, i) => expectLufs(r.analysis.loudness.integratedLufs, expected[i]))
    for (const p of progress) {
      expect(p.length).toBeGreaterThan(5)
      expect(p.at(-1)).toBe(1)
      for (let k = 1; k < p.length; k++) expect(p[k]).toBeGreaterThanOrEqual(p[k - 1])
    }
  })

  it('rejects a bad file with a WavFormatError and its reason, a missing one with ENOENT, and still serves', async () => {
    const bad = await runAudioTask('analyze', { path: join(dir, 'not-audio.wav') }).catch((e: unknown) => e)
    expect(bad).toBeInstanceOf(WavFormatError)
    expect((bad as WavFormatError).reason).toMatch(/not a WAVE file/)
    const missing = await runAudioTask('analyze', { path: join(dir, 'nope.wav') }).catch((e: unknown) => e)
    expect((missing as NodeJS.ErrnoException).code).toBe('ENOENT')
    const ok = await runAudioTask('analyze', { path: files[2] })
    expectLufs(ok.analysis.loudness.integratedLufs, expected[2])
  })

  it('renders the same bytes in a worker thread as in this one, reporting frames', async () => {
    const a = join(dir, 'in-thread.wav')
    const b = join(dir, 'in-worker.wav')
    const here = await renderItem(renderOf(long), a)
    const frames: number[] = []
    const there = await runAudioTask(
      'render',
      { req: renderOf(long), outPath: b },
      { onProgress: (f) => frames.push(f) },
    )
    expect(sha256sum(a)).toBe(sha256sum(b))
    expect(there.levels).toEqual(here.levels)
    expect(frames.length).toBeGreaterThan(0)
    await expect(
      runAudioTask('render', { req: renderOf(join(dir, 'gone.wav')), outPath: join(dir, 'x.wav') }),
    ).rejects.toMatchObject({ code: 'ENOENT' })
  }, 120_000)

  it('stops a running task through its AbortSignal with the signal’s reason, and serves the next', async () => {
    const stop = new AbortController()
    const seen: number[] = []
    const running = runAudioTask(
      'render',
      { req: renderOf(long), outPath: join(dir, 'stopped.wav') },
      { signal: stop.signal, onProgress: (f) => seen.push(f) },
    )
    const reason = new Error('no longer wanted')
    // Stopped once it has demonstrably started (its first frames report), not on a timer.
    await new Promise<void>((resolve) => {
      const wait = setInterval(() => seen.length > 0 && (clearInterval(wait), resolve()), 10)
    })
    stop.abort(reason)
    await expect(running).rejects.toBe(reason)
    const ok = await runAudioTask('analyze', { path: files[0] })
    expectLufs(ok.analysis.loudness.integratedLufs, expected[0])
  }, 120_000)

  it('refuses at once a task whose signal is already aborted', async () => {
    const stop = new AbortController()
    stop.abort(new Error('already stopped'))
    await expect(runAudioTask('analyze', { path: files[0] }, { signal: stop.signal })).rejects.toThrow(
      'already stopped',
    )
  })

  it('stops a task that stays silent past its limit, saying so', async () => {
    const err = await runAudioTask('analyze', { path: long }, { silenceLimitMs: 1 }).catch((e: unknown) => e)
    expect(err).toBeInstanceOf(TaskSilent)
    expect((err as Error).message).toMatch(/^measuring stopped answering: it sent nothing for/)
  })

  it('works under plain `npx tsx`, outside vitest, from another working directory', () => {
    const script = new URL('../helpers/pool-smoke.ts', import.meta.url).pathname
    const out = execFileSync('npx', ['--prefix', process.cwd(), 'tsx', script, files[1], join(dir, 'not-audio.wav')], {
      cwd: tmpdir(),
      encoding: 'utf8',
    })
    const [ok, bad] = JSON.parse(out) as { file: string; lufs?: number; error?: string }[]
    expectLufs(ok.lufs ?? null, expected[1])
    expect(bad.error).toMatch(/^WavFormatError: not a WAVE file/)
  })
})
