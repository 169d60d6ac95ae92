// The listening bench's spectrograms: the whole take (rendered once per size and
// options, kept beside the take's other derived files) and a detailed view of a
// short excerpt (rendered on request). Axes, scaling and colours are described in
// server/audio/spectrogram.ts.
import fs from 'node:fs'
import path from 'node:path'
import { randomUUID } from 'node:crypto'
import { IdParams } from '@shared/schemas/common'
import { MAX_EXCERPT_SECONDS, SPECTROGRAM_FLOOR_DB, SpectrogramQuery } from '@shared/schemas/spectrogram'
import type { AppContext } from '../core/context'
import { AppError, notFound } from '../core/errors'
import type { Api } from '../core/routes'
import { params, query } from '../core/validate'
import { renderSpectrogram, type SpectrogramOptions } from '../audio/spectrogram'
import { findTake } from '../takes/takes.repository'

const CACHE_CONTROL = 'private, max-age=3600'

/** spectrogram-1600x256.png for the default axis and floor; the options spelled out otherwise. */
export function spectrogramCacheName(q: SpectrogramQuery): string {
  const size = `${q.width}x${q.height}`
  const plain = q.scale === 'log' && q.minHz === undefined && q.maxHz === undefined && q.floorDb === SPECTROGRAM_FLOOR_DB.default
  if (plain) return `spectrogram-${size}.png`
  return `spectrogram-${size}-${q.scale}-${q.minHz ?? 'min'}-${q.maxHz ?? 'max'}-f${q.floorDb}.png`
}

/** Writes a temp file beside `final`, then renames it into place, so readers never see half an image. */
async function writeAtomically(final: string, bytes: Buffer): Promise<void> {
  const tmp = `${final}.${randomUUID()}.tmp`
  try {
    await fs.promises.writeFile(tmp, bytes)
    await fs.promises.rename(tmp, final)
  } catch (err) {
    await fs.promises.rm(tmp, { force: true })
    throw err
  }
}

export function registerSpectrogramRoutes(api: Api, ctx: AppContext) {
  /** Whole-take renders in progress, by cache file: a second request for the same image waits for the first. */
  const inFlight = new Map<string, Promise<Buffer>>()

  const render = async (audio: string, opts: SpectrogramOptions): Promise<Buffer> => {
    try {
      return await renderSpectrogram(audio, opts)
    } catch (err) {
      if (err instanceof RangeError) throw new AppError(400, 'BAD_SPECTROGRAM', err.message)
      throw err
    }
  }

  const wholeTake = (takeId: number, audio: string, q: SpectrogramQuery): Promise<Buffer> => {
    const file = path.join(ctx.storage.derivedDir(takeId), spectrogramCacheName(q))
    const running = inFlight.get(file)
    if (running) return running
    const job = (async () => {
      try {
        return await fs.promises.readFile(file)
      } catch (err) {
        if ((err as NodeJS.ErrnoException).code !== 'ENOENT') throw err
      }
      const png = await render(audio, { width: q.width, height: q.height, scale: q.scale, minHz: q.minHz, maxHz: q.maxHz, floorDb: q.floorDb })
      await writeAtomically(file, png)
      return png
    })().finally(() => inFlight.delete(file))
    inFlight.set(file, job)
    return job
  }

  /**
   * GET /api/takes/:id/spectrogram.png?width=1600&height=256 — the whole take.
   * GET /api/takes/:id/spectrogram.png?start=12.5&end=14.5&width=1200&height=320 — an excerpt (≤ 30 s).
   * Optional: scale=log|linear, minHz, maxHz, floorDb.
   */
  api.route('get', '/takes/:id/spectrogram.png', 'library:browse', async (req, res) => {
    const { id } = params(req, IdParams)
    const row = await findTake(ctx.db, id)
    if (!row) throw notFound('take', 'TAKE_NOT_FOUND')
    if (row.status !== 'ready') {
      throw new AppError(409, 'NOT_MEASURED', `Take ${row.id} is ${row.status}; its spectrogram exists once it is measured`)
    }
    const q = query(req, SpectrogramQuery)
    const audio = ctx.storage.abs(row.audio_path)

    let png: Buffer
    if (q.start === undefined || q.end === undefined) {
      png = await wholeTake(row.id, audio, q)
    } else {
      const length = q.end - q.start
      if (length > MAX_EXCERPT_SECONDS) {
        throw new AppError(400, 'EXCERPT_TOO_LONG', `An excerpt can be at most ${MAX_EXCERPT_SECONDS} s long; ${round(length)} s were asked for`, {
          maxSeconds: MAX_EXCERPT_SECONDS,
          seconds: length,
        })
      }
      const duration = row.duration_seconds ?? 0
      if (q.end > duration) {
        throw new AppError(
          400,
          'EXCERPT_OUT_OF_RANGE',
          `The excerpt ${round(q.start)}–${round(q.end)} s runs past the end of the take; start and end must lie within 0–${round(duration)} s`,
          { start: q.start, end: q.end, durationSeconds: duration },
        )
      }
      png = await render(audio, {
        width: q.width,
        height: q.height,
        startSeconds: q.start,
        endSeconds: q.end,
        scale: q.scale,
        minHz: q.minHz,
        maxHz: q.maxHz,
        floorDb: q.floorDb,
      })
    }
    res.set('Cache-Control', CACHE_CONTROL).type('image/png').send(png)
  })
}

const round = (s: number) => Math.round(s * 1000) / 1000
