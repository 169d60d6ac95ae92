import { z } from 'zod'
import { Take } from './takes'

/** GET /api/takes/:id/similar query. */
export const SimilarQuery = z.object({ limit: z.coerce.number().int().min(1).max(100).default(20) })
export type SimilarQuery = z.infer<typeof SimilarQuery>

/** The part of a similar take that matched best, when a region of it matched better than the whole. */
export const SimilarRegion = z.object({
  id: z.number().int(),
  name: z.string(),
  startSeconds: z.number(),
  endSeconds: z.number(),
})
export type SimilarRegion = z.infer<typeof SimilarRegion>

export const SimilarItem = z.object({
  take: Take,
  /** 0..1, higher is closer: 1 / (1 + distance between the feature vectors). */
  score: z.number().min(0).max(1),
  region: SimilarRegion.nullable(),
})
export type SimilarItem = z.infer<typeof SimilarItem>

export const SimilarPage = z.object({ items: z.array(SimilarItem) })
export type SimilarPage = z.infer<typeof SimilarPage>
