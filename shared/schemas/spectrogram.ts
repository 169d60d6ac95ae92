import { z } from 'zod'

/** Longest excerpt the detailed spectrogram renders, in seconds. */
export const MAX_EXCERPT_SECONDS = 30

export const SPECTROGRAM_WIDTH = { min: 64, max: 4000, default: 1600 } as const
export const SPECTROGRAM_HEIGHT = { min: 32, max: 1024, default: 256 } as const
export const SPECTROGRAM_FLOOR_DB = { min: -200, max: -10, default: -110 } as const

export const SpectrogramScale = z.enum(['log', 'linear'])
export type SpectrogramScale = z.infer<typeof SpectrogramScale>

/** An integer pixel size: out-of-range values are clamped to the range rather than refused. */
const clampedSize = (range: { min: number; max: number; default: number }) =>
  z.coerce
    .number({ error: 'Give the size as a number of pixels' })
    .transform((v) => Math.min(range.max, Math.max(range.min, Math.round(v))))
    .default(range.default)

const seconds = (name: string) => z.coerce.number({ error: `Give ${name} in seconds` }).min(0, `${name} cannot be negative`)
const hertz = (name: string) => z.coerce.number({ error: `Give ${name} in Hz` }).positive(`${name} must be above 0 Hz`)

/**
 * Query of GET /api/takes/:id/spectrogram.png. Without start/end: the whole take
 * (cached per size). With both: a detailed view of that excerpt of the take.
 */
export const SpectrogramQuery = z
  .object({
    width: clampedSize(SPECTROGRAM_WIDTH),
    height: clampedSize(SPECTROGRAM_HEIGHT),
    start: seconds('start').optional(),
    end: seconds('end').optional(),
    scale: SpectrogramScale.default('log'),
    minHz: hertz('minHz').optional(),
    maxHz: hertz('maxHz').optional(),
    floorDb: z.coerce
      .number({ error: 'Give floorDb in dBFS' })
      .min(SPECTROGRAM_FLOOR_DB.min, `floorDb must be at least ${SPECTROGRAM_FLOOR_DB.min} dBFS`)
      .max(SPECTROGRAM_FLOOR_DB.max, `floorDb must be at most ${SPECTROGRAM_FLOOR_DB.max} dBFS`)
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
    message: 'maxHz must be above minHz',
    path: ['maxHz'],
  })
export type SpectrogramQuery = z.infer<typeof SpectrogramQuery>
