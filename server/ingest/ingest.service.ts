import fs from 'node:fs'
import path from 'node:path'
import type { User } from '@shared/schemas/auth'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import { probeWav, WavFormatError } from '../audio/wav-reader'
import { addEvent, findTakeBySha, insertTake } from '../takes/takes.service'
import { findSession } from '../captures/captures.service'
import { prefillFromMetadata } from './prefill'
import type { StreamedFile } from './upload-storage'
import { isStorageFull, storageFull } from './storage-errors'

export interface IngestInput {
  sessionId: number
  uploader: Pick<User, 'id'> | null
  file: StreamedFile
  originalName: string
}

const rmQuiet = (p: string) => fs.rmSync(p, { force: true })

const duplicate = (originalName: string, existing: { id: number; filename: string }) =>
  new AppError(409, 'DUPLICATE', `${originalName} has the same content as take ${existing.id} (${existing.filename})`, {
    takeId: existing.id,
    file: originalName,
  })

/**
 * Turns a streamed upload into a queued take. The request thread only probes the header
 * (RIFF/RF64/BW64 WAVE with a valid fmt chunk); the file's own metadata is read later by the
 * analysis job in a worker (it may be large and hostile). Then, in one transaction, the
 * content hash is claimed (a take row with the analysis job), and only when the claim wins is
 * the file moved to its content-addressed place; a parallel upload of the same bytes finds
 * the claim and answers 409 without touching that path. Any refusal or failure deletes the
 * upload's own file and leaves no row; a final path that a row references is never deleted.
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
        throw new AppError(415, 'UNSUPPORTED_AUDIO', `${originalName}: ${err.message}`, {
          file: originalName,
          reason: err.message,
        })
      }
      throw err
    }

    const existing = await findTakeBySha(ctx.db, file.sha256)
    if (existing) throw duplicate(originalName, existing)

    // Until the job reads the file's own labels, the title is the file name.
    const prefill = prefillFromMetadata(null, originalName)
    const relative = ctx.storage.audioRelative(file.sha256)
    const finalPath = ctx.storage.abs(relative)
    let moved = false
    // With S3 the bytes go to the bucket before the claim, outside the transaction (a long
    // multipart upload must not hold the database's write lock); the key is the content hash,
    // so a parallel upload of the same bytes writes the same object.
    let uploaded = false
    try {
      await ctx.storage.upload(relative, file.path)
      uploaded = ctx.storage.remote
      const take = await ctx.db.transaction().execute(async (trx) => {
        const again = await findTakeBySha(trx, file.sha256)
        if (again) throw duplicate(originalName, again)
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
          bext_description: '',
        })
        if (session.default_source_id) {
          await trx
            .insertInto('take_sources')
            .values({ take_id: row.id, source_id: session.default_source_id, state: session.default_state })
            .execute()
        }
        await addEvent(trx, row.id, input.uploader?.id ?? null, 'uploaded', `Uploaded ${originalName}`)
        await ctx.jobs.enqueue(trx, 'analyze-take', row.id)
        // The claim is ours (the row above holds the hash); only now does the file take the final name.
        fs.mkdirSync(path.dirname(finalPath), { recursive: true })
        fs.renameSync(file.path, finalPath)
        moved = true
        return row
      })
      ctx.jobs.kick()
      return { id: take.id, filename: take.filename, status: take.status }
    } catch (err) {
      // Rolled back after the move (a commit that failed): the file goes only when no row refers to it.
      if ((moved || uploaded) && !(await findTakeBySha(ctx.db, file.sha256).catch(() => true))) {
        rmQuiet(finalPath)
        if (uploaded) await ctx.storage.blobs.remove(relative).catch(() => undefined)
      }
      if (err instanceof AppError) throw err
      if (isStorageFull(err)) throw storageFull()
      if (String(err).includes('UNIQUE constraint failed: takes.sha256')) {
        const dup = await findTakeBySha(ctx.db, file.sha256)
        throw new AppError(409, 'DUPLICATE', `${originalName} has the same content as take ${dup?.id}`, {
          takeId: dup?.id,
          file: originalName,
        })
      }
      throw err
    }
  } finally {
    rmQuiet(file.path)
  }
}
