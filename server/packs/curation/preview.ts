// Auditions and quick exports: one item rendered exactly as a build would
// render it, into a small cache under builds/previews/ keyed by everything that
// shapes the bytes, then sent from there with HTTP Range support (players seek
// with ranges, so a file beats a one-shot stream). Renders of the same key that
// are asked for at once share one render. Old entries are swept as new ones
// are made: at most PREVIEW_KEEP files, none older than PREVIEW_MAX_AGE_MS.
import { createHash } from 'node:crypto'
import fs from 'node:fs/promises'
import path from 'node:path'
import type { AppContext } from '../../core/context'
import { renderRequest, type ItemSpec } from './item-spec'

export const PREVIEW_KEEP = 40
export const PREVIEW_MAX_AGE_MS = 60 * 60 * 1000

const pending = new Map<string, Promise<string>>()

function keyOf(spec: ItemSpec): string {
  const { itemId: _i, position: _p, ...shaping } = spec
  return createHash('sha256')
    .update(JSON.stringify({ v: 1, ...shaping }))
    .digest('hex')
    .slice(0, 32)
}

async function sweep(dir: string, keep: string): Promise<void> {
  const names = (await fs.readdir(dir)).filter((n) => n.endsWith('.wav') && n !== keep)
  const stats = await Promise.all(
    names.map(async (n) => ({ n, t: (await fs.stat(path.join(dir, n)).catch(() => null))?.mtimeMs ?? 0 })),
  )
  stats.sort((a, b) => b.t - a.t)
  const now = Date.now()
  for (const [i, s] of stats.entries()) {
    if (i >= PREVIEW_KEEP - 1 || now - s.t > PREVIEW_MAX_AGE_MS) await fs.rm(path.join(dir, s.n), { force: true })
  }
}

/** The rendered WAV of a spec, from the cache or rendered now (on a worker thread, counted against `who`). */
export async function renderedPreview(
  ctx: AppContext,
  spec: ItemSpec,
  originatorReference: string,
  who: string,
): Promise<string> {
  const dir = ctx.storage.abs(path.join('builds', 'previews'))
  await fs.mkdir(dir, { recursive: true })
  const key = keyOf(spec)
  const file = path.join(dir, `${key}.wav`)
  const cached = await fs.stat(file).catch(() => null)
  if (cached) {
    const t = new Date()
    await fs.utimes(file, t, t).catch(() => undefined)
    return file
  }
  let job = pending.get(key)
  if (!job) {
    job = (async () => {
      await ctx.heavy.render(
        who,
        renderRequest(spec, await ctx.storage.local(spec.audioPath), originatorReference, new Date()),
        file,
      )
      await sweep(dir, `${key}.wav`).catch(() => undefined)
      return file
    })().finally(() => pending.delete(key))
    pending.set(key, job)
  }
  return job
}
