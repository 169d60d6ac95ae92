// POST /api/takes/:id/modulation: a take, or an excerpt of it, as a control curve
// for modular rigs (csv, a float wav control signal, or a MIDI controller curve).
// Anyone who can read the take may make one. The curve is computed on a
// heavy-work thread (a per-user limit answers 429), never on the API's event loop.
//
// Caution (also in the README and on the bench): control outputs from an audio
// interface must be DC-coupled to reach modular inputs; check your equipment's
// voltage range and follow its manuals.
import { IdParams } from '@shared/schemas/common'
import { MODULATION_HEADERS, ModulationBody } from '@shared/schemas/modulation'
import type { AppContext } from '../core/context'
import type { Api } from '../core/routes'
import { body, params } from '../core/validate'
import { planModulation } from './modulation.service'

const CONTENT_TYPES = { csv: 'text/csv; charset=utf-8', wav: 'audio/wav', midi: 'audio/midi' } as const

export function registerModulationRoutes(api: Api, ctx: AppContext) {
  api.route('post', '/takes/:id/modulation', 'library:browse', async (req, res) => {
    const { id } = params(req, IdParams)
    const plan = await planModulation(ctx.db, id, body(req, ModulationBody))
    const file = await ctx.heavy.modulation(`user:${req.user!.id}`, await ctx.storage.local(plan.audioPath), plan.order)
    const h = MODULATION_HEADERS
    res.set({
      [h.points]: String(file.points),
      [h.rateHz]: String(plan.order.rateHz),
      [h.start]: String(plan.order.startSeconds),
      [h.end]: String(plan.order.endSeconds),
      ...(file.unit ? { [h.unit]: file.unit } : {}),
      ...(file.scale ? { [h.scale]: file.scale } : {}),
    })
    res.attachment(plan.fileName).type(CONTENT_TYPES[plan.order.format])
    res.send(Buffer.from(file.bytes.buffer, file.bytes.byteOffset, file.bytes.byteLength))
  })
}
