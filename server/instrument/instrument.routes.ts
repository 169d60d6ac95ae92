import { IdParams } from '@shared/schemas/common'
import {
  LoopCycleQuery,
  LoopSuggestionsBody,
  OnsetSuggestionsBody,
  SplitBody,
  SplitSuggestionsBody,
} from '@shared/schemas/instrument'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params, query } from '../core/validate'
import { loopCycle, loopSuggestions, onsetSuggestions } from './instrument.service'
import { splitSuggestions, splitTake } from './split.service'

/** Proposals of one-shots, loops and splits in a take, and the split itself, for whoever may mark regions on it (the own/any rule of take edits). */
export function registerInstrumentRoutes(api: Api, ctx: AppContext) {
  api.route('post', '/takes/:id/onset-suggestions', 'takes:edit-own', async (req, res) => {
    res.json(await onsetSuggestions(ctx, req.user!, params(req, IdParams).id, body(req, OnsetSuggestionsBody)))
  })

  api.route('post', '/takes/:id/loop-suggestions', 'takes:edit-own', async (req, res) => {
    res.json(await loopSuggestions(ctx, req.user!, params(req, IdParams).id, body(req, LoopSuggestionsBody)))
  })

  api.route('post', '/takes/:id/split-suggestions', 'takes:edit-own', async (req, res) => {
    res.json(await splitSuggestions(ctx, req.user!, params(req, IdParams).id, body(req, SplitSuggestionsBody)))
  })

  api.route('post', '/takes/:id/split', 'takes:edit-own', async (req, res) => {
    res.status(201).json(await splitTake(ctx, req.user!, params(req, IdParams).id, body(req, SplitBody)))
  })

  /** One cycle of a loop (crossfaded when asked) as a float WAV, for the bench's loop audition. */
  api.route('get', '/takes/:id/loop-cycle', 'library:browse', async (req, res) => {
    const wav = await loopCycle(ctx, req.user!, params(req, IdParams).id, query(req, LoopCycleQuery))
    res.type('audio/wav').send(wav)
  })
}
