import { z } from 'zod'
import { Analysis, WavFormat } from './analysis'
import { Character, CharacterTag, TagConfidence } from './character'
import { NoteOutcome } from './notes'
import { SourceKind } from './sources'

export const TAKE_STATUSES = ['queued', 'analyzing', 'ready', 'failed'] as const
export const TakeStatus = z.enum(TAKE_STATUSES)
export type TakeStatus = z.infer<typeof TakeStatus>

export const TakeSource = z.object({
  sourceId: z.number().int(),
  name: z.string(),
  kind: SourceKind,
  state: z.string(),
})
export type TakeSource = z.infer<typeof TakeSource>

/**
 * A take's spectrum over time, small enough for a library row: `columns` time slices × the bands,
 * each level quantised to 0..255 over the 60 dB below the glyph's loudest cell. Computed at
 * measuring time (server/audio/glyph.ts) and stored with the analysis; takes measured before it
 * have none until measured again.
 */
export const TakeGlyph = z.object({
  /** Centre frequency of each band, Hz, low to high, equally spaced in log frequency. */
  bands: z.array(z.number()),
  columns: z.number().int(),
  /** columns × bands.length levels, column by column, lowest band first; 0 = 60 dB or more below the loudest cell. */
  levels: z.array(z.number().int().min(0).max(255)),
  /** The mains-hum comb's fundamental when the take has mains hum. */
  humHz: z.number().nullable(),
  /** The loudest steady tone at or above 1 kHz (a switching supply's or a display's whine), Hz. */
  whineHz: z.number().nullable(),
})
export type TakeGlyph = z.infer<typeof TakeGlyph>

export const Take = z.object({
  id: z.number().int(),
  sessionId: z.number().int(),
  sessionTitle: z.string(),
  /** The original file name, always kept. */
  filename: z.string(),
  title: z.string(),
  description: z.string(),
  notes: z.string(),
  status: TakeStatus,
  /** 0..1 while analysing. */
  progress: z.number(),
  error: z.string().nullable(),
  sizeBytes: z.number().int(),
  sha256: z.string(),
  uploader: z.object({ id: z.number().int(), name: z.string() }).nullable(),
  createdAt: z.string(),
  updatedAt: z.string(),
  sources: z.array(TakeSource),
  tags: z.array(z.string()),
  /** Tiny overview for lists: 0..1 amplitudes. */
  thumb: z.array(z.number()),
  /** The library row's spectrum glyph; null until measured (or when measured before glyphs existed). */
  glyph: TakeGlyph.nullable(),
  format: WavFormat.nullable(),
  analysis: Analysis.nullable(),
  /** The analysis's character descriptors (null before measuring or for analyses stored before them). */
  character: Character.nullable(),
  /** Character tags the analysis suggests that the take does not carry yet, strongest first. */
  suggestedTags: z.array(TagConfidence),
})
export type Take = z.infer<typeof Take>

/** The answer to an upload. */
export const UploadedTake = z.object({ id: z.number().int(), filename: z.string(), status: TakeStatus })

export const TAKE_SORTS = [
  'createdAt',
  'title',
  'filename',
  'session',
  'duration',
  'sampleRate',
  'channels',
  'integratedLufs',
  'truePeak',
  'loudnessRange',
  'samplePeak',
  'noiseFloor',
  'hum',
  'status',
  'relevance',
] as const
export const TakeSort = z.enum(TAKE_SORTS)
export type TakeSort = z.infer<typeof TakeSort>

const num = z.coerce.number().finite()
const int = z.coerce.number().int()
/** Values one repeated filter may carry: each becomes a condition, and SQLite limits how deep an expression may nest. */
export const MAX_REPEATED = 50
/** A query value that may come once or repeated (?tag=a&tag=b), at most MAX_REPEATED times. */
const many = <T extends z.ZodTypeAny>(s: T) =>
  z.preprocess(
    (v) => (v === undefined ? undefined : Array.isArray(v) ? v : [v]),
    z
      .array(s)
      .max(MAX_REPEATED, {
        error: (i) => `at most ${MAX_REPEATED} values of one filter (got ${(i.input as unknown[]).length})`,
      })
      .optional(),
  )

/** GET /api/takes query. Names are part of the public API. */
export const TakeQuery = z.object({
  q: z.string().max(500).optional(),
  sourceId: many(int.positive()),
  sourceKind: many(SourceKind),
  tag: many(z.string().max(80)),
  sessionId: int.positive().optional(),
  uploaderId: int.positive().optional(),
  sampleRate: int.positive().optional(),
  channels: int.positive().optional(),
  minDuration: num.optional(),
  maxDuration: num.optional(),
  minLufs: num.optional(),
  maxLufs: num.optional(),
  minTruePeak: num.optional(),
  maxTruePeak: num.optional(),
  /** Loudness range (EBU Tech 3342), LU. */
  minLra: num.optional(),
  maxLra: num.optional(),
  hum: z.enum(['50', '60', 'none']).optional(),
  /** Takes with at least one listening note carrying this outcome. */
  noteOutcome: NoteOutcome.optional(),
  /** Takes whose analysis finds this character (a suggestion-strength tag), accepted or not. */
  character: many(CharacterTag),
  status: TakeStatus.optional(),
  sort: TakeSort.optional(),
  order: z.enum(['asc', 'desc']).optional(),
  page: int.min(1).default(1),
  pageSize: int.min(1).max(200).default(50),
})
export type TakeQuery = z.infer<typeof TakeQuery>

export const TakePage = z.object({
  items: z.array(Take),
  /** How many takes match; exact unless `totalCapped`. */
  total: z.number().int(),
  /** Counting stopped early (at 10,000, or where many takes had to be read to count): at least `total` match. */
  totalCapped: z.boolean(),
  page: z.number().int(),
  pageSize: z.number().int(),
})
export type TakePage = z.infer<typeof TakePage>
