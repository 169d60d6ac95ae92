import { z } from 'zod'

/**
 * The character tags the engine may suggest. Each has a definition in DEVELOPERS.md ("Character
 * suggestions") and a synthetic family built from it in tests/audio/character.test.ts.
 */
export const CHARACTER_TAGS = ['hum', 'whine', 'burst train', 'crackle', 'hiss', 'motor', 'data chirp'] as const
export const CharacterTag = z.enum(CHARACTER_TAGS)
export type CharacterTag = z.infer<typeof CharacterTag>

/** A suggestion is shown from this confidence up. */
export const SUGGEST_FROM = 0.5

export const TagConfidence = z.object({ tag: CharacterTag, confidence: z.number().min(0).max(1) })
export type TagConfidence = z.infer<typeof TagConfidence>

const num = z.number().finite().nullable()

/** Descriptors of a take's character, stored with its analysis (`analysis.character`). */
export const Character = z.object({
  /** Mains hum strength 0..1 (the hum reading's confidence; 0 without mains hum). */
  humStrength: z.number(),
  /** The steady tone (above 250 Hz) and how steady it is: share of frames within 1 % of its median. */
  whineHz: num,
  whineStability: z.number(),
  /** Share of frames holding a strong tone (any frequency above 250 Hz). */
  tonePresence: z.number(),
  /** Bursts: the envelope's periodicity (normalised autocorrelation peak) and its rate. */
  burstPeriodicity: z.number(),
  burstRateHz: num,
  /** Spread of the 20 ms level: 95th minus 10th percentile, dB. */
  envelopeDepthDb: z.number(),
  /** Short clicks (≤ 3 ms) per second, and their mean length in ms. */
  clicksPerSecond: z.number(),
  clickMs: num,
  /** Spectral flatness 0..1 of the averaged spectrum (white or pink, whichever is flatter). */
  flatness: z.number(),
  /** Harmonic series below 400 Hz: share of frames, median fundamental, glide range in octaves. */
  harmonicPresence: z.number(),
  motorHz: num,
  glideOctaves: z.number(),
  /** Share of tonal short frames (≈ 4 ms) whose frequency strays more than 0.1 octave from the usual one. */
  chirpJumpShare: z.number(),
  /** Every tag's confidence, strongest first (suggestions are those ≥ SUGGEST_FROM). */
  tags: z.array(TagConfidence),
})
export type Character = z.infer<typeof Character>

/** POST /api/takes/suggested-tags/accept: moves suggestions into tags; `tags` limits which ones. */
export const AcceptSuggestedBody = z.object({
  takeIds: z.array(z.number().int().positive()).min(1).max(500),
  tags: z.array(CharacterTag).min(1).optional(),
})
export type AcceptSuggestedBody = z.infer<typeof AcceptSuggestedBody>

export const AcceptSuggestedResult = z.object({
  /** Takes whose tags changed, and how many tags were added in all. */
  updated: z.array(z.number().int()),
  added: z.number().int(),
  /** Takes the caller may not edit (recordists: other people's takes). */
  skipped: z.array(z.number().int()),
})
export type AcceptSuggestedResult = z.infer<typeof AcceptSuggestedResult>

/** What a take's character suggests beyond the tags it carries, strongest first. */
export function suggestedTags(character: Character | null | undefined, tags: string[]): TagConfidence[] {
  return (character?.tags ?? []).filter((t) => t.confidence >= SUGGEST_FROM && !tags.includes(t.tag))
}
