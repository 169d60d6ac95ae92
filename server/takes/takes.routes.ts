import fs from 'node:fs'
import { IdParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import { AppError, notFound } from '../core/errors'
import type { Api } from '../core/routes'
import { params } from '../core/validate'
import { readPeaks } from '../audio/peaks'
import { sendFromStore } from '../storage/send'
import { findTake } from './takes.repository'
import { takeRowToTake, takeRowsToTakes } from './takes.mapper'
import { searchTakeRows } from './takes.search'
import { TakeQuery } from '@shared/schemas/takes'
import { BulkEditBody, StatesQuery, TagsQuery, UpdateTakeBody } from '@shared/schemas/library'
import { z } from 'zod'
import { body, query } from '../core/validate'
import { bulkEdit, editTake, stateSuggestions, tagSuggestions, takeHistory } from './takes.service'

const PeaksQuery = z.object({ maxPoints: z.coerce.number().int().min(16).max(200_000).optional() })

export function registerTakeRoutes(api: Api, ctx: AppContext) {
  const load = async (id: number) => {
    const row = await findTake(ctx.db, id)
    if (!row) throw notFound('take', 'TAKE_NOT_FOUND')
    return row
  }

  /** The library: full-text search, filters, sort, one page at a time. */
  api.route('get', '/takes', 'library:browse', async (req, res) => {
    const q = TakeQuery.parse(req.query)
    const { rows, total, totalCapped } = await searchTakeRows(ctx.db, q)
    res.json({
      items: await takeRowsToTakes(ctx.db, rows, { withoutFileMetadata: true }),
      total,
      totalCapped,
      page: q.page,
      pageSize: q.pageSize,
    })
  })

  api.route('get', '/takes/:id', 'library:browse', async (req, res) => {
    res.json({ take: await takeRowToTake(ctx.db, await load(params(req, IdParams).id)) })
  })

  /** Waveform overview in the form wavesurfer.js takes: one min/max array per channel, −1..1. */
  api.route('get', '/takes/:id/peaks', 'library:browse', async (req, res) => {
    const row = await load(params(req, IdParams).id)
    if (row.status !== 'ready')
      throw new AppError(
        409,
        'NOT_MEASURED',
        `Take ${row.id} is ${row.status}; its waveform exists once it is measured`,
      )
    const { maxPoints } = PeaksQuery.parse(req.query)
    res.set('Cache-Control', 'private, max-age=3600')
    res.json(await readPeaks(await ctx.storage.local(ctx.storage.peaksRelative(row.id)), { maxPoints }))
  })

  /** The audio itself, with HTTP Range support (206, 416, Accept-Ranges) from Express's send. */
  api.route('get', '/takes/:id/audio', 'library:browse', async (req, res, next) => {
    const row = await load(params(req, IdParams).id)
    const headers = { 'Content-Type': 'audio/wav', 'Cache-Control': 'private, max-age=3600' }
    const unsatisfiable = () =>
      void res
        .status(416)
        .set('Content-Range', `bytes */${row.size_bytes}`)
        .json({
          error: {
            code: 'RANGE_NOT_SATISFIABLE',
            message: `The requested range lies outside the file's ${row.size_bytes} bytes`,
            details: { sizeBytes: row.size_bytes },
          },
        })
    // With S3 and no working copy here, ranged reads from the bucket: a seek never fetches the whole take.
    if (ctx.storage.remote && !fs.existsSync(ctx.storage.abs(row.audio_path)))
      return sendFromStore(ctx.storage.blobs, row.audio_path, req, res, {
        size: row.size_bytes,
        headers,
        unsatisfiable,
      })
    res.sendFile(
      ctx.storage.abs(row.audio_path),
      { acceptRanges: true, headers },
      (err?: Error & { status?: number }) => {
        if (!err || res.headersSent) return
        if (err.status === 416) return unsatisfiable()
        next(err)
      },
    )
  })

  // ---- editing ----

  /** Title, description, notes, tags and device links; own takes for recordists, any take for designers and admins. */
  api.route('patch', '/takes/:id', 'takes:edit-own', async (req, res) => {
    res.json({ take: await editTake(ctx.db, req.user!, params(req, IdParams).id, body(req, UpdateTakeBody)) })
  })

  /** Tags, devices and capture session of many takes at once, in one transaction; recordists only their own takes (see assertMayBulkEdit). */
  api.route('post', '/takes/bulk', 'takes:edit-own', async (req, res) => {
    res.json(await bulkEdit(ctx.db, req.user!, body(req, BulkEditBody)))
  })

  api.route('get', '/takes/:id/history', 'library:browse', async (req, res) => {
    res.json({ events: await takeHistory(ctx.db, params(req, IdParams).id) })
  })

  // ---- suggestions for the editors ----

  api.route('get', '/tags', 'library:browse', async (req, res) => {
    const q = query(req, TagsQuery)
    res.json({ tags: await tagSuggestions(ctx.db, q.q, q.limit) })
  })

  api.route('get', '/states', 'library:browse', async (req, res) => {
    const q = query(req, StatesQuery)
    res.json({ states: await stateSuggestions(ctx.db, q) })
  })
}
