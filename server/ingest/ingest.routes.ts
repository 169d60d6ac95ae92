import multer from 'multer'
import type { RequestHandler } from 'express'
import { cleanFileName, IdParams } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import type { Api } from '../core/routes'
import { params } from '../core/validate'
import { findSession } from '../captures/captures.service'
import { ingestFile } from './ingest.service'
import { hashingDiskStorage, type StreamedFile } from './upload-storage'
import { isStorageFull, storageFull } from './storage-errors'
import { measureAgain } from './remeasure'
import { minimumRate } from './slow-bodies'

export function registerIngestRoutes(api: Api, ctx: AppContext) {
  const limit = ctx.config.maxUploadBytes
  const upload = multer({
    storage: hashingDiskStorage(ctx.storage),
    limits: { fileSize: limit, files: 1, fields: 10, parts: 12 },
    // Browsers send file names as UTF-8 without saying so.
    defParamCharset: 'utf8',
  }).single('file')

  // Refuse before a single byte is written: unknown session, or a body that
  // announces more than the limit allows.
  const precheck: RequestHandler = async (req, _res, next) => {
    const { id } = params(req, IdParams)
    if (!(await findSession(ctx.db, id)))
      throw new AppError(404, 'SESSION_NOT_FOUND', 'No capture session with that id')
    const announced = Number(req.headers['content-length'] ?? 0)
    if (announced > limit + 64 * 1024) {
      throw new AppError(
        413,
        'TOO_LARGE',
        `The file is larger than the ${Math.round(limit / 2 ** 20)} MiB this server accepts`,
        { limitBytes: limit },
      )
    }
    next()
  }

  const receive: RequestHandler = (req, res, next) => {
    upload(req, res, (err: unknown) => {
      if (!err) return next()
      if (isStorageFull(err)) return next(storageFull())
      if (err instanceof multer.MulterError && err.code === 'LIMIT_FILE_SIZE') {
        return next(
          new AppError(
            413,
            'TOO_LARGE',
            `The file is larger than the ${Math.round(limit / 2 ** 20)} MiB this server accepts`,
            { limitBytes: limit },
          ),
        )
      }
      if (err instanceof multer.MulterError)
        return next(
          new AppError(400, 'BAD_UPLOAD', `Upload refused: ${err.message} (send one WAV in the field "file")`),
        )
      next(new AppError(400, 'BAD_UPLOAD', `The upload was cut off or malformed: ${(err as Error).message}`))
    })
  }

  api.route(
    'post',
    '/capture-sessions/:id/takes',
    'captures:manage',
    precheck,
    minimumRate(ctx.config.uploadMinBytesPerSecond, ctx.config.uploadRateWindowMs),
    receive,
    async (req, res) => {
      const file = req.file as unknown as StreamedFile & { originalname: string }
      if (!file) throw new AppError(400, 'NO_FILE', 'Send one WAV file in the multipart field "file"')
      const take = await ingestFile(ctx, {
        sessionId: params(req, IdParams).id,
        uploader: req.user!,
        file: { path: file.path, size: file.size, sha256: file.sha256 },
        originalName: cleanFileName(file.originalname), // ≤ 255 characters, no control characters
      })
      res.status(201).json({ take })
    },
  )

  /** A take whose measuring failed for a passing reason is queued again (designer, or the uploader). */
  api.route('post', '/takes/:id/measure', 'takes:edit-own', async (req, res) => {
    res.status(202).json({ take: await measureAgain(ctx, req.user!, params(req, IdParams).id) })
  })
}
