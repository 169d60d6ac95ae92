import fs from 'node:fs'
import path from 'node:path'
import type { User } from '@shared/schemas/auth'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import { probeWav, readMetadata, WavFormatError } from '../audio/wav-reader'
import { addEvent, findTakeBySha, insertTake } from '../takes/takes.repository'
import { findSession } from '../captures/captures.repository'
import { prefillFromMetadata } from './prefill'
import type { StreamedFile } from './upload-storage'

export interface IngestInput {
  sessionId: number
  uploader: Pick<User, 'id'> | null
  file: StreamedFile
  originalName: string
}

const rmQuiet = (p: string) => fs.rmSync(p, { force: true })

/**
 * Turns a streamed upload into a queued take. The file is checked by content
 * (RIFF/RF64/BW64 WAVE with a valid fmt chunk), refused as a duplicate when its
 * SHA-256 is known, moved to its content-addressed place and recorded with an
 * analysis job in one transaction. Any refusal or failure deletes the file and
 * leaves no row behind.
 */
export async function ingestFile(ctx: AppContext, input: IngestInput) {
  const { file, originalName } = input
  try {
    const session = await findSession(ctx.db, input.sessionId)
    if (!session) throw new AppError(404, 'SESSION_NOT_FOUND', 'No capture session with that id')

    let info
    try {
      info = await probeWav(file.path)
    } catch (err) {
      if (err instanceof WavFormatError) {
        throw new AppError(415, 'UNSUPPORTED_AUDIO', `${originalName}: ${err.message}`, { file: originalName, reason: err.message })
      }
      throw err
    }

    const existing = await findTakeBySha(ctx.db, file.sha256)
    if (existing) {
      throw new AppError(409, 'DUPLICATE', `${originalName} has the same content as take ${existing.id} (${existing.filename})`, {
        takeId: existing.id,
        file: originalName,
      })
    }

    const meta = await readMetadata(file.path, info).catch(() => null)
    const prefill = prefillFromMetadata(meta, originalName)
    const relative = ctx.storage.audioRelative(file.sha256)
    const finalPath = ctx.storage.abs(relative)
    fs.mkdirSync(path.dirname(finalPath), { recursive: true })
    fs.renameSync(file.path, finalPath)

    try {
      const take = await ctx.db.transaction().execute(async (trx) => {
        const row = await insertTake(trx, {
          session_id: input.sessionId,
          uploader_id: input.uploader?.id ?? null,
          filename: originalName,
          title: prefill.title,
          description: prefill.description,
          notes: prefill.notes,
          audio_path: relative,
          size_bytes: file.size,
          sha256: file.sha256,
          status: 'queued',
          duration_seconds: info.format.durationSeconds,
          sample_rate: info.format.sampleRate,
          channels: info.format.channels,
          bits_per_sample: info.format.bitsPerSample,
          format_json: JSON.stringify(info.format),
          bext_description: meta?.bext?.description ?? '',
        })
        if (session.default_source_id) {
          await trx
            .insertInto('take_sources')
            .values({ take_id: row.id, source_id: session.default_source_id, state: session.default_state })
            .execute()
        }
        await addEvent(trx, row.id, input.uploader?.id ?? null, 'uploaded', `Uploaded ${originalName}`)
        await ctx.jobs.enqueue(trx, 'analyze-take', row.id)
        return row
      })
      ctx.jobs.kick()
      return { id: take.id, filename: take.filename, status: take.status }
    } catch (err) {
      rmQuiet(finalPath)
      if (String(err).includes('UNIQUE constraint failed: takes.sha256')) {
        const dup = await findTakeBySha(ctx.db, file.sha256)
        throw new AppError(409, 'DUPLICATE', `${originalName} has the same content as take ${dup?.id}`, { takeId: dup?.id, file: originalName })
      }
      throw err
    }
  } finally {
    rmQuiet(file.path)
  }
}
