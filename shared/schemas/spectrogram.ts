import { z } from 'zod'

/** Longest excerpt the detailed spectrogram renders, in seconds. */
export const MAX_EXCERPT_SECONDS = 30

/**
 * The menu of spectrogram options. Every request is snapped onto it (never refused for being
 * off the menu), so the server only ever renders and caches a few variants per take: the
 * nearest width and height below, whole dB for the floor, whole Hz for the band, and excerpt
 * ends on a 10 ms grid (start down, end up). The PNG's X-Spectrogram-* headers carry what was
 * actually rendered, for the client to align its axes.
 */
export const SPECTROGRAM_WIDTHS = [256, 512, 1024, 1600, 2048, 3200] as const
export const SPECTROGRAM_HEIGHTS = [64, 128, 256, 512] as const
export const SPECTROGRAM_WIDTH = { default: 1600 } as const
export const SPECTROGRAM_HEIGHT = { default: 256 } as const
export const SPECTROGRAM_FLOOR_DB = { min: -200, max: -10, default: -110 } as const
/** Excerpt start and end are snapped to this grid, in seconds. */
export const SPECTROGRAM_TIME_STEP = 0.01
/** Lowest and highest band edge accepted, in whole Hz (higher values are clamped to the file's Nyquist frequency). */
export const SPECTROGRAM_HZ = { min: 1, max: 200_000 } as const

/** Response headers of the PNG: the values actually rendered. */
export const SPECTROGRAM_HEADERS = {
  width: 'X-Spectrogram-Width',
  height: 'X-Spectrogram-Height',
  scale: 'X-Spectrogram-Scale',
  start: 'X-Spectrogram-Start',
  end: 'X-Spectrogram-End',
  minHz: 'X-Spectrogram-Min-Hz',
  maxHz: 'X-Spectrogram-Max-Hz',
  floorDb: 'X-Spectrogram-Floor-Db',
} as const

export const SpectrogramScale = z.enum(['log', 'linear'])
export type SpectrogramScale = z.infer<typeof SpectrogramScale>

/** The menu entry nearest to v (the larger one on a tie). */
export function snapToMenu(v: number, menu: readonly number[]): number {
  let best = menu[0]
  for (const m of menu) if (Math.abs(m - v) <= Math.abs(best - v)) best = m
  return best
}

const snapTime = (s: number, round: (x: number) => number) =>
  round(Math.round(s * 1e6) / (SPECTROGRAM_TIME_STEP * 1e6)) * SPECTROGRAM_TIME_STEP
export const snapStart = (s: number) => Number(snapTime(s, Math.floor).toFixed(2))
export const snapEnd = (s: number) => Number(snapTime(s, Math.ceil).toFixed(2))

const sizeOn = (menu: readonly number[], dflt: number) =>
  z.coerce
    .number({ error: 'Give the size as a number of pixels' })
    .transform((v) => snapToMenu(v, menu))
    .default(dflt)

const seconds = (name: string) =>
  z.coerce.number({ error: `Give ${name} in seconds` }).min(0, `${name} cannot be negative`)
const hertz = (name: string) =>
  z.coerce
    .number({ error: `Give ${name} in Hz` })
    .positive(`${name} must be above 0 Hz`)
    .transform((v) => Math.min(SPECTROGRAM_HZ.max, Math.max(SPECTROGRAM_HZ.min, Math.round(v))))

/**
 * Query of GET /api/takes/:id/spectrogram.png. Without start/end: the whole take.
 * With both: a detailed view of that excerpt. Both are cached per snapped variant.
 */
export const SpectrogramQuery = z
  .object({
    width: sizeOn(SPECTROGRAM_WIDTHS, SPECTROGRAM_WIDTH.default),
    height: sizeOn(SPECTROGRAM_HEIGHTS, SPECTROGRAM_HEIGHT.default),
    start: seconds('start').optional(),
    end: seconds('end').optional(),
    scale: SpectrogramScale.default('log'),
    minHz: hertz('minHz').optional(),
    maxHz: hertz('maxHz').optional(),
    floorDb: z.coerce
      .number({ error: 'Give floorDb in dBFS' })
      .transform((v) => Math.min(SPECTROGRAM_FLOOR_DB.max, Math.max(SPECTROGRAM_FLOOR_DB.min, Math.round(v))))
      .default(SPECTROGRAM_FLOOR_DB.default),
  })
  .refine((q) => (q.start === undefined) === (q.end === undefined), {
    message: 'Give both start and end (seconds) for an excerpt, or neither for the whole take',
    path: ['end'],
  })
  .refine((q) => q.start === undefined || q.end === undefined || q.start < q.end, {
    message: 'end must be later than start',
    path: ['end'],
  })
  .refine((q) => q.minHz === undefined || q.maxHz === undefined || q.minHz < q.maxHz, {
    message: 'maxHz must be above minHz (after rounding to whole Hz)',
    path: ['maxHz'],
  })
export type SpectrogramQuery = z.infer<typeof SpectrogramQuery>
