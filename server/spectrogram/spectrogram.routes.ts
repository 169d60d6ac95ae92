// The listening bench's spectrograms: the whole take and a detailed view of a
// short excerpt. Options are snapped onto the menu in shared/schemas/spectrogram.ts,
// each variant is rendered once on a worker thread (never on the API's event
// loop; a per-user limit answers 429) and kept in the bounded cache beside the
// take's other derived files. Axes, scaling and colours are described in
// server/audio/spectrogram.ts.
import path from 'node:path'
import { IdParams } from '@shared/schemas/common'
import {
  MAX_EXCERPT_SECONDS,
  SPECTROGRAM_FLOOR_DB,
  SPECTROGRAM_HEADERS,
  SpectrogramQuery,
  snapEnd,
  snapStart,
} from '@shared/schemas/spectrogram'
import type { AppContext } from '../core/context'
import { AppError, notFound } from '../core/errors'
import type { Api } from '../core/routes'
import { params, query } from '../core/validate'
import { DEFAULT_LOG_MIN_HZ, type SpectrogramOptions } from '../audio/spectrogram'
import { findTake } from '../takes/takes.service'
import { SpectrogramCache } from './spectrogram-cache'

const CACHE_CONTROL = 'private, max-age=3600'

/** What is rendered, every option resolved: the cache key and the answer's headers. */
export interface SpectrogramVariant {
  width: number
  height: number
  scale: 'log' | 'linear'
  /** null: the whole take. */
  start: number | null
  end: number | null
  minHz: number
  maxHz: number
  floorDb: number
}

/** The query resolved against the take: the band's defaults and the Nyquist limit filled in, as the renderer would. */
export function resolveVariant(q: SpectrogramQuery, sampleRate: number, durationSeconds: number): SpectrogramVariant {
  const nyquist = sampleRate / 2
  const minHz = Math.min(q.minHz ?? (q.scale === 'log' ? DEFAULT_LOG_MIN_HZ : 0), nyquist - 1)
  const maxHz = Math.min(nyquist, q.maxHz ?? nyquist)
  const excerpt = q.start !== undefined && q.end !== undefined
  return {
    width: q.width,
    height: q.height,
    scale: q.scale,
    start: excerpt ? snapStart(q.start!) : null,
    end: excerpt ? Math.min(snapEnd(q.end!), durationSeconds) : null,
    minHz,
    maxHz,
    floorDb: q.floorDb,
  }
}

/** spectrogram-1600x256.png for the whole take on the default axis and floor; every option spelled out otherwise. */
export function spectrogramCacheName(v: SpectrogramVariant, nyquist: number): string {
  const size = `${v.width}x${v.height}`
  const plain =
    v.scale === 'log' &&
    v.minHz === DEFAULT_LOG_MIN_HZ &&
    v.maxHz === nyquist &&
    v.floorDb === SPECTROGRAM_FLOOR_DB.default
  const span = v.start === null ? '' : `-t${Math.round(v.start * 100)}-${Math.round(v.end! * 100)}`
  if (plain && !span) return `spectrogram-${size}.png`
  return `spectrogram-${size}-${v.scale}-${v.minHz}-${v.maxHz}-f${v.floorDb}${span}.png`
}

export function registerSpectrogramRoutes(api: Api, ctx: AppContext) {
  const cache = new SpectrogramCache(ctx.storage.abs('derived'), {
    perTake: ctx.config.spectrogramsPerTake,
    totalBytes: ctx.config.spectrogramCacheBytes,
  })
  /** Renders in progress, by cache file: a second request for the same image waits for the first. */
  const inFlight = new Map<string, Promise<Buffer>>()

  const image = (file: string, who: string, audio: string, opts: SpectrogramOptions): Promise<Buffer> => {
    const running = inFlight.get(file)
    if (running) return running
    const job = (async () => {
      const kept = await cache.read(file)
      if (kept) return kept
      let png: Buffer
      try {
        png = await ctx.heavy.spectrogram(who, audio, opts)
      } catch (err) {
        if ((err as Error).name === 'RangeError') throw new AppError(400, 'BAD_SPECTROGRAM', (err as Error).message)
        throw err
      }
      await cache.write(file, png)
      return png
    })().finally(() => inFlight.delete(file))
    inFlight.set(file, job)
    return job
  }

  /**
   * GET /api/takes/:id/spectrogram.png?width=1600&height=256 — the whole take.
   * GET /api/takes/:id/spectrogram.png?start=12.5&end=14.5&width=1024&height=256 — an excerpt (≤ 30 s).
   * Optional: scale=log|linear, minHz, maxHz, floorDb. Every option is snapped onto the menu.
   */
  api.route('get', '/takes/:id/spectrogram.png', 'library:browse', async (req, res) => {
    const { id } = params(req, IdParams)
    const row = await findTake(ctx.db, id)
    if (!row) throw notFound('take', 'TAKE_NOT_FOUND')
    if (row.status !== 'ready' || !row.sample_rate) {
      throw new AppError(
        409,
        'NOT_MEASURED',
        `Take ${row.id} is ${row.status}; its spectrogram exists once it is measured`,
      )
    }
    const q = query(req, SpectrogramQuery)
    const duration = row.duration_seconds ?? 0
    if (q.start !== undefined && q.end !== undefined) {
      const length = q.end - q.start
      // A microsecond of slack: times arrive as decimals, and 30.37 − 0.37 is 30.000000000000004 in binary.
      if (length > MAX_EXCERPT_SECONDS + 1e-6) {
        throw new AppError(
          400,
          'EXCERPT_TOO_LONG',
          `An excerpt can be at most ${MAX_EXCERPT_SECONDS} s long; ${round(length)} s were asked for`,
          {
            maxSeconds: MAX_EXCERPT_SECONDS,
            seconds: length,
          },
        )
      }
      if (q.end > duration) {
        throw new AppError(
          400,
          'EXCERPT_OUT_OF_RANGE',
          `The excerpt ${round(q.start)}–${round(q.end)} s runs past the end of the take; start and end must lie within 0–${round(duration)} s`,
          { start: q.start, end: q.end, durationSeconds: duration },
        )
      }
    }
    const v = resolveVariant(q, row.sample_rate, duration)
    if (!(v.maxHz > v.minHz)) {
      throw new AppError(
        400,
        'BAD_SPECTROGRAM',
        `The band ${v.minHz}–${v.maxHz} Hz is empty (this take's Nyquist frequency is ${row.sample_rate / 2} Hz)`,
      )
    }
    const file = path.join(ctx.storage.derivedDir(row.id), spectrogramCacheName(v, row.sample_rate / 2))
    const png = await image(file, `user:${req.user!.id}`, await ctx.storage.local(row.audio_path), {
      width: v.width,
      height: v.height,
      scale: v.scale,
      minHz: v.minHz,
      maxHz: v.maxHz,
      floorDb: v.floorDb,
      ...(v.start !== null ? { startSeconds: v.start, endSeconds: v.end! } : {}),
    })
    const h = SPECTROGRAM_HEADERS
    res.set({
      'Cache-Control': CACHE_CONTROL,
      [h.width]: String(v.width),
      [h.height]: String(v.height),
      [h.scale]: v.scale,
      [h.start]: String(v.start ?? 0),
      [h.end]: String(v.end ?? duration),
      [h.minHz]: String(v.minHz),
      [h.maxHz]: String(v.maxHz),
      [h.floorDb]: String(v.floorDb),
    })
    res.type('image/png').send(png)
  })
}

const round = (s: number) => Math.round(s * 1000) / 1000
