// The worker pool. Signals come from sox; expected loudness is ffmpeg's
// ebur128 reading of the same files (±0.1 LU, EBU Tech 3341 §2.9), so the
// pool is checked to return the real analysis, not just some object.
import { execFileSync } from 'node:child_process'
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { createAnalysisPool } from '../../server/audio/pool'
import { WavFormatError } from '../../server/audio/wav-reader'
import { ffmpegEbur128, sox } from '../helpers/reference-tools'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-pool-'))
const fixture = new URL('../helpers/pool-fixture-worker.ts', import.meta.url)
const files: string[] = []
const expected: number[] = []

beforeAll(() => {
  ;[-18, -26, -32].forEach((db, i) => {
    const f = join(dir, `take-${i}.wav`)
    sox(['-n', '-r', '48000', '-b', '24', '-c', '2', f, 'synth', '30', 'pinknoise', 'vol', `${db}dB`])
    files.push(f)
    expected.push(ffmpegEbur128(f).integratedLufs)
  })
  writeFileSync(join(dir, 'not-audio.wav'), 'this is a text file, not a take\n')
})
afterAll(() => rmSync(dir, { recursive: true, force: true }))

function expectLufs(measured: number | null, ref: number) {
  expect(measured).not.toBeNull()
  expect(Math.abs(measured! - ref)).toBeLessThanOrEqual(0.1)
}

describe('analysis pool', () => {
  it('analyses several files and reports rising progress that ends at 1', async () => {
    const pool = createAnalysisPool(2)
    try {
      const progress = files.map(() => [] as number[])
      const results = await Promise.all(
        files.map((f, i) => pool.run(f, join(dir, `p${i}.peaks`), (x) => progress[i].push(x))),
      )
      results.forEach((r, i) => expectLufs(r.analysis.loudness.integratedLufs, expected[i]))
      for (const p of progress) {
        expect(p.length).toBeGreaterThan(5)
        expect(p.at(-1)).toBe(1)
        for (let k = 1; k < p.length; k++) expect(p[k]).toBeGreaterThanOrEqual(p[k - 1])
      }
    } finally {
      await pool.close()
    }
  })

  it('runs tasks in different workers at the same time (two tasks must meet)', async () => {
    const pool = createAnalysisPool(2, { workerUrl: fixture })
    try {
      const a = join(dir, 'rendezvous-a.wav')
      const b = join(dir, 'rendezvous-b.wav')
      execFileSync('cp', [files[0], a])
      execFileSync('cp', [files[1], b])
      const [ra, rb] = await Promise.all([pool.run(a), pool.run(b)])
      expectLufs(ra.analysis.loudness.integratedLufs, expected[0])
      expectLufs(rb.analysis.loudness.integratedLufs, expected[1])
    } finally {
      await pool.close()
    }
  })

  it('rejects a bad file with a WavFormatError and its reason, a missing one with ENOENT', async () => {
    const pool = createAnalysisPool(1)
    try {
      const bad = await pool.run(join(dir, 'not-audio.wav')).catch((e: unknown) => e)
      expect(bad).toBeInstanceOf(WavFormatError)
      expect((bad as WavFormatError).reason).toMatch(/not a WAVE file/)
      const missing = await pool.run(join(dir, 'nope.wav')).catch((e: unknown) => e)
      expect(missing).toBeInstanceOf(Error)
      expect((missing as NodeJS.ErrnoException).code).toBe('ENOENT')
      // The worker that reported those errors still serves.
      expectLufs((await pool.run(files[2])).analysis.loudness.integratedLufs, expected[2])
    } finally {
      await pool.close()
    }
  })

  for (const kind of ['crash-exit', 'crash-throw']) {
    it(`survives a worker that dies (${kind}): its task is rejected, queued work completes`, async () => {
      const pool = createAnalysisPool(1, { workerUrl: fixture })
      try {
        const crash = join(dir, `${kind}.wav`)
        const [crashed, after] = await Promise.allSettled([pool.run(crash), pool.run(files[0])])
        expect(crashed.status).toBe('rejected')
        expect(String((crashed as PromiseRejectedResult).reason.message)).toMatch(/analysis worker crashed/)
        expect(after.status).toBe('fulfilled')
        expectLufs(
          (after as PromiseFulfilledResult<Awaited<ReturnType<typeof pool.run>>>).value.analysis.loudness
            .integratedLufs,
          expected[0],
        )
      } finally {
        await pool.close()
      }
    })
  }

  it('stops a worker that stays silent past the time limit (a stuck reader): its task fails saying so, queued work completes', async () => {
    const pool = createAnalysisPool(1, { workerUrl: fixture, silenceLimitMs: 5000 })
    try {
      const [stuck, after] = await Promise.allSettled([pool.run(join(dir, 'hang.wav')), pool.run(files[0])])
      expect(stuck.status).toBe('rejected')
      expect(String((stuck as PromiseRejectedResult).reason.message)).toBe(
        'measuring stopped answering: it sent nothing for 5 s and was stopped',
      )
      expect(after.status).toBe('fulfilled')
    } finally {
      await pool.close()
    }
  }, 60_000)

  it('close() rejects queued tasks and refuses new ones', async () => {
    const pool = createAnalysisPool(1)
    const running = pool.run(files[0]).catch((e: Error) => e)
    const queued = pool.run(files[1]).catch((e: Error) => e)
    await pool.close()
    expect(String(await queued)).toMatch(/pool closed/)
    expect(String(await running)).toMatch(/pool closed/)
    await expect(pool.run(files[2])).rejects.toThrow(/pool closed/)
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
