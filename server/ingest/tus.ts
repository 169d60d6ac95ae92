// Resumable uploads (the tus protocol, @tus/server): a long take cut off at any point goes on
// from the last byte the server kept, after a page reload too. Bytes land in the tus store
// (a folder under storage/tus, or the S3 bucket through @tus/s3-store); when the last one has
// arrived the file is handed to the same ingest path as POST /capture-sessions/:id/takes
// (content checks, SHA-256 dedup, every refusal), and the tus upload is deleted either way.
import fs from 'node:fs'
import path from 'node:path'
import { randomUUID } from 'node:crypto'
import { pipeline } from 'node:stream/promises'
import type { Request as ExpressRequest } from 'express'
import { Server, type DataStore, type Upload } from '@tus/server'
import { FileStore } from '@tus/file-store'
import { S3Store } from '@tus/s3-store'
import { cleanFileName } from '@shared/schemas/common'
import type { AppContext } from '../core/context'
import { AppError } from '../core/errors'
import { hashingTap } from '../core/hash-tap'
import { parseS3Url, S3_COMPAT } from '../storage/s3'
import { findSession } from '../captures/captures.service'
import { ingestFile } from './ingest.service'

export const TUS_PATH = '/api/files'

/** A tus hook's refusal: @tus/server sends status_code and body as they are; the body is the one error shape. */
function refusal(err: AppError) {
  return {
    status_code: err.status,
    body: JSON.stringify({ error: { code: err.code, message: err.message, details: err.details ?? {} } }),
  }
}

/** The Express request behind a tus hook's web Request (srvx keeps it), with the signed-in member. */
function expressRequest(req: Request): ExpressRequest {
  const node = (req as Request & { runtime?: { node?: { req?: ExpressRequest } } }).runtime?.node?.req
  if (!node) throw new Error('tus hook without its Node request')
  return node
}

/** Reads captureSessionId and filename from the upload's metadata; 400/404 as the upload route would answer. */
async function uploadTarget(ctx: AppContext, upload: Upload) {
  const sessionId = Number(upload.metadata?.captureSessionId)
  const filename = upload.metadata?.filename
  if (!Number.isSafeInteger(sessionId) || sessionId < 1 || !filename)
    throw new AppError(400, 'BAD_UPLOAD', 'A resumable upload needs captureSessionId and filename in its metadata')
  if (!(await findSession(ctx.db, sessionId)))
    throw new AppError(404, 'SESSION_NOT_FOUND', 'No capture session with that id')
  return { sessionId, originalName: cleanFileName(filename) }
}

/**
 * @tus/s3-store's remove() first aborts the upload's multipart upload, which S3 has already
 * completed once the last byte arrived (it answers "not found"), and then never deletes the object. Here a
 * finished upload is removed too: ingest has copied it by then.
 */
class FinishedUploadsS3Store extends S3Store {
  override async remove(id: string): Promise<void> {
    try {
      await super.remove(id)
    } catch (err) {
      if ((err as { status_code?: number }).status_code !== 404) throw err
      await this.client.deleteObjects({
        Bucket: this.bucket,
        Delete: { Objects: [{ Key: id }, { Key: this.infoKey(id) }] },
      })
      await this.clearCache(id)
    }
  }
}

/**
 * An upload nobody has continued for a week is given up: its bytes would otherwise stay on disk or in the
 * bucket for ever. A week covers a recordist who resumes after a field trip.
 */
const ABANDONED_AFTER_MS = 7 * 24 * 3600 * 1000

function tusStore(ctx: AppContext): DataStore {
  if (!ctx.config.storageUrl)
    return new FileStore({
      directory: path.join(ctx.storage.root, 'tus'),
      expirationPeriodInMilliseconds: ABANDONED_AFTER_MS,
    })
  const { bucket } = parseS3Url(ctx.config.storageUrl)
  return new FinishedUploadsS3Store({
    partSize: 8 * 2 ** 20,
    expirationPeriodInMilliseconds: ABANDONED_AFTER_MS,
    s3ClientConfig: {
      bucket,
      region: ctx.config.s3Region || 'us-east-1',
      ...S3_COMPAT,
      ...(ctx.config.s3Endpoint ? { endpoint: ctx.config.s3Endpoint, forcePathStyle: true } : {}),
    },
  })
}

/** Copies a finished tus upload into storage/incoming while hashing it, as the multipart route streams one. */
async function takeOut(ctx: AppContext, store: DataStore, id: string) {
  const target = ctx.storage.incomingPath()
  const { tap, result } = hashingTap()
  const source = await (store as FileStore | S3Store).read(id)
  try {
    await pipeline(source, tap, fs.createWriteStream(target, { flags: 'wx' }))
  } catch (err) {
    fs.rmSync(target, { force: true })
    throw err
  }
  return { path: target, ...result() }
}

export function createTusServer(ctx: AppContext): Server {
  const datastore = tusStore(ctx)
  const server: Server = new Server({
    path: TUS_PATH,
    datastore,
    maxSize: ctx.config.maxUploadBytes,
    // Location headers relative to this origin: the app may sit behind a proxy.
    relativeLocation: true,
    namingFunction: () => `tus-${randomUUID()}`,
    async onUploadCreate(req, upload) {
      try {
        const user = expressRequest(req).user!
        await uploadTarget(ctx, upload)
        // Only the member who started an upload may resume, read or end it.
        return { metadata: { ...upload.metadata, uploaderId: String(user.id) } }
      } catch (err) {
        if (err instanceof AppError) throw refusal(err)
        throw err
      }
    },
    async onIncomingRequest(req, id) {
      if (req.method === 'POST') return
      const user = expressRequest(req).user!
      const upload = await datastore.getUpload(id).catch(() => null)
      // Someone else's upload looks like a missing one.
      if (upload && upload.metadata?.uploaderId !== String(user.id))
        throw refusal(new AppError(404, 'UPLOAD_NOT_FOUND', 'No resumable upload with that id'))
    },
    async onUploadFinish(req, upload) {
      const user = expressRequest(req).user!
      let file: { path: string; size: number; sha256: string } | null = null
      try {
        const target = await uploadTarget(ctx, upload)
        file = await takeOut(ctx, datastore, upload.id)
        const take = await ingestFile(ctx, { ...target, uploader: user, file })
        return {
          status_code: 201,
          headers: { 'Content-Type': 'application/json' },
          body: JSON.stringify({ take }),
        }
      } catch (err) {
        if (err instanceof AppError) throw refusal(err)
        throw err
      } finally {
        if (file) fs.rmSync(file.path, { force: true })
        await datastore.remove(upload.id).catch(() => undefined)
      }
    },
  })
  // Sweep abandoned uploads hourly; the timer never keeps the process alive.
  setInterval(() => void server.cleanUpExpiredUploads().catch(() => undefined), 3600 * 1000).unref()
  return server
}
