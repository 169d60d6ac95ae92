// From capture to instrument: the tools that propose one-shots and loops in a
// take. Each proposes; a person accepts, adjusts or rejects (as regions).
import { z } from 'zod'
import { Take } from './takes'

/** Longest range one onset search reads (its samples are held in memory on a worker thread). */
export const MAX_ONSET_SECONDS = 120
/** Longest range one loop search reads. */
export const MAX_LOOP_SECONDS = 60
/** Shortest loop proposed: below this a loop is a buzz, not a cycle. */
export const MIN_LOOP_SECONDS = 0.05

const Seconds = z.number().finite().min(0)
const Sensitivity = z.number().min(0).max(1)

export const OnsetSuggestionsBody = z
  .object({
    startSeconds: Seconds.optional(),
    endSeconds: Seconds.optional(),
    /** 0–1: higher finds softer onsets (default 0.5). */
    sensitivity: Sensitivity.optional(),
  })
  .strict()
export type OnsetSuggestionsBody = z.infer<typeof OnsetSuggestionsBody>

export const OnsetSlice = z.object({
  /** The onset, moved back to the zero crossing before it. */
  startSeconds: z.number(),
  /** Where the sound decays below the threshold, or the next onset (a few ms of fade implied). */
  endSeconds: z.number(),
  /** Highest sample of the slice on any channel, dBFS. */
  peakDbfs: z.number(),
})
export type OnsetSlice = z.infer<typeof OnsetSlice>

export const OnsetSuggestionsResponse = z.object({ slices: z.array(OnsetSlice) })
export type OnsetSuggestionsResponse = z.infer<typeof OnsetSuggestionsResponse>

export const LoopSuggestionsBody = z
  .object({
    startSeconds: Seconds,
    endSeconds: Seconds,
    /** The loop length wanted; default: as long as fits in the range. */
    approxLengthSeconds: z.number().finite().positive().optional(),
  })
  .strict()
export type LoopSuggestionsBody = z.infer<typeof LoopSuggestionsBody>

export const LoopSuggestion = z.object({
  /** First frame of the loop (a rising zero crossing of the channels' sum, as pack renders cut loops). */
  startSeconds: z.number(),
  /** End of the loop (exclusive): the frame at endSeconds plays again as the start. */
  endSeconds: z.number(),
  /** 0–1: 1 is a join as smooth as the material itself (value, slope and short-term spectrum). */
  score: z.number(),
  /** 0 when the join is clean; otherwise a crossfade length that hides it. */
  crossfadeMs: z.number(),
})
export type LoopSuggestion = z.infer<typeof LoopSuggestion>

export const LoopSuggestionsResponse = z.object({ loops: z.array(LoopSuggestion) })
export type LoopSuggestionsResponse = z.infer<typeof LoopSuggestionsResponse>

// ---- splitting a sweep into takes ----

/** Shortest take a split may make: below this it is a click, better kept as a region. */
export const MIN_SPLIT_SECONDS = 0.5
/** Most takes one split makes (each is a file, a row and an analysis job). */
export const MAX_SPLIT_SEGMENTS = 64

export const SplitSuggestionsBody = z
  .object({
    /** Parts shorter than this are merged into a neighbour or, between pauses, left out (default 2). */
    minSegmentSeconds: z.number().finite().min(MIN_SPLIT_SECONDS).max(3600).optional(),
    /** 0–1: higher finds shorter pauses and subtler changes (default 0.5). */
    sensitivity: Sensitivity.optional(),
  })
  .strict()
export type SplitSuggestionsBody = z.infer<typeof SplitSuggestionsBody>

export const SplitReason = z.enum(['pause', 'change'])
export type SplitReason = z.infer<typeof SplitReason>

export const SplitSuggestion = z.object({
  startSeconds: z.number(),
  endSeconds: z.number(),
  /** 0–1, of the boundary that sets this part apart (the one before it; for the first part, the one after). */
  confidence: z.number(),
  /** "pause": the level fell near the noise floor there; "change": the spectrum changed character (a new device). */
  reason: SplitReason,
})
export type SplitSuggestion = z.infer<typeof SplitSuggestion>

/** Empty when nothing splits the take. */
export const SplitSuggestionsResponse = z.object({ segments: z.array(SplitSuggestion) })
export type SplitSuggestionsResponse = z.infer<typeof SplitSuggestionsResponse>

export const SplitBody = z
  .object({
    segments: z
      .array(z.object({ startSeconds: Seconds, endSeconds: Seconds }).strict())
      .min(1, 'Give at least one segment')
      .max(MAX_SPLIT_SEGMENTS, `At most ${MAX_SPLIT_SEGMENTS} segments in one split`),
  })
  .strict()
export type SplitBody = z.infer<typeof SplitBody>

/** 201: the new takes, in the order of the segments, queued for measuring like uploads. */
export const SplitResponse = z.object({ takes: z.array(Take) })
export type SplitResponse = z.infer<typeof SplitResponse>

// ---- loop audition ----

/** GET /api/takes/:id/loop-cycle: one cycle of a loop as a float WAV, for the bench to play round and round. */
export const LoopCycleQuery = z
  .object({
    startSeconds: z.coerce.number().finite().min(0),
    endSeconds: z.coerce.number().finite().min(0),
    /** The join's crossfade, blended from the material just before the start (default 0). */
    crossfadeMs: z.coerce.number().finite().min(0).max(500).optional(),
  })
  .strict()
export type LoopCycleQuery = z.infer<typeof LoopCycleQuery>
