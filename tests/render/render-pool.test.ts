// Renders in worker threads (the executor large builds use on four cores or more):
// the same request gives the same bytes as in the build's own thread, the
// SHA-256 the pool reports is the file's (GNU coreutils sha256sum), a stop
// leaves no file behind, and a missing source keeps its ENOENT code.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { DEFAULT_RENDER_SETTINGS } from '@shared/schemas/packs'
import { renderItem, RenderStopped, type RenderRequest } from '../../server/render/render'
import { createRenderPool, type RenderPool } from '../../server/render/render-pool'
import { META, sox, tempDir } from './render-fixtures'

const dir = tempDir('render-pool')
const short = path.join(dir, 'short.wav')
const long = path.join(dir, 'long.wav')
let pool: RenderPool

const request = (source: string): RenderRequest => ({
  sourcePath: source,
  startSeconds: 0.5,
  endSeconds: null,
  kind: 'one-shot',
  settings: { ...DEFAULT_RENDER_SETTINGS, bitDepth: 16 },
  metadata: META,
  ditherSeed: 99,
})

beforeAll(() => {
  sox(['-n', '-r', '48000', '-b', '24', '-c', '2', short, 'synth', '3', 'pinknoise', 'vol', '-20dB'])
  sox(['-n', '-r', '48000', '-b', '24', '-c', '2', long, 'synth', '120', 'pinknoise', 'vol', '-20dB'])
  pool = createRenderPool(2)
})
afterAll(async () => {
  await pool.close()
  fs.rmSync(dir, { recursive: true, force: true })
})

const sha256sum = (f: string) => execFileSync('sha256sum', [f], { encoding: 'utf8' }).split(' ')[0]

describe('the render pool', () => {
  it('renders the same bytes in a worker thread as in this one', async () => {
    const a = path.join(dir, 'in-thread.wav')
    const b = path.join(dir, 'in-worker.wav')
    const here = await renderItem(request(short), a)
    const there = await pool.render(request(short), b, { stopped: false })
    expect(sha256sum(a)).toBe(sha256sum(b))
    expect(there.levels).toEqual(here.levels)
    expect(there.gainDb).toBe(here.gainDb)
  })

  it('stops between blocks when asked and leaves no file', async () => {
    const out = path.join(dir, 'stopped.wav')
    const signal = { stopped: false }
    const running = pool.render(request(long), out, signal)
    signal.stopped = true
    await expect(running).rejects.toBeInstanceOf(RenderStopped)
    expect(fs.readdirSync(dir).filter((f) => f.includes('stopped'))).toEqual([])
  })

  it('keeps the ENOENT code of a missing source, which names the failure in a build', async () => {
    await expect(
      pool.render(request(path.join(dir, 'gone.wav')), path.join(dir, 'x.wav'), { stopped: false }),
    ).rejects.toMatchObject({ code: 'ENOENT' })
  })
})
