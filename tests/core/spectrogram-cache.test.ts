// The spectrogram cache stays within its two bounds (images per take, bytes in
// all), dropping the least recently used image first; a read counts as a use.
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterEach, beforeEach, describe, expect, it } from 'vitest'
import { SpectrogramCache } from '../../server/spectrogram/spectrogram-cache'

let root: string
beforeEach(() => {
  root = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-spectro-cache-'))
  for (const t of ['take-1', 'take-2']) fs.mkdirSync(path.join(root, t))
})
afterEach(() => fs.rmSync(root, { recursive: true, force: true }))

const img = (take: string, n: number) => path.join(root, take, `spectrogram-${n}.png`)
const pause = () => new Promise((r) => setTimeout(r, 15)) // distinct file times
const kept = (take: string) => fs.readdirSync(path.join(root, take)).sort()

describe('SpectrogramCache', () => {
  it('keeps at most perTake images per take, dropping the least recently used (a read is a use)', async () => {
    const cache = new SpectrogramCache(root, { perTake: 3, totalBytes: 1e9 })
    for (const n of [1, 2, 3]) {
      await cache.write(img('take-1', n), Buffer.alloc(10, n))
      await pause()
    }
    expect(await cache.read(img('take-1', 1))).not.toBeNull() // 1 is now the most recent
    await pause()
    await cache.write(img('take-1', 4), Buffer.alloc(10))
    expect(kept('take-1')).toEqual(['spectrogram-1.png', 'spectrogram-3.png', 'spectrogram-4.png'])
    await cache.write(img('take-2', 1), Buffer.alloc(10))
    expect(kept('take-1')).toHaveLength(3) // another take's images do not count against this one
  })

  it('keeps all images together under totalBytes, oldest use first, across takes', async () => {
    const cache = new SpectrogramCache(root, { perTake: 100, totalBytes: 250 })
    await cache.write(img('take-1', 1), Buffer.alloc(100))
    await pause()
    await cache.write(img('take-2', 1), Buffer.alloc(100))
    await pause()
    await cache.write(img('take-1', 2), Buffer.alloc(100))
    expect(fs.existsSync(img('take-1', 1))).toBe(false)
    expect(fs.existsSync(img('take-2', 1))).toBe(true)
    expect(fs.existsSync(img('take-1', 2))).toBe(true)
    expect(cache.totalBytes()).toBeLessThanOrEqual(250)
  })

  it('counts images already on disk when it starts', async () => {
    fs.writeFileSync(img('take-2', 9), Buffer.alloc(200))
    const cache = new SpectrogramCache(root, { perTake: 100, totalBytes: 250 })
    await pause()
    await cache.write(img('take-1', 1), Buffer.alloc(100))
    expect(fs.existsSync(img('take-2', 9))).toBe(false)
    expect(cache.totalBytes()).toBe(100)
  })
})
