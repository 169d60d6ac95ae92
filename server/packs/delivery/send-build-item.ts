// One item of a finished build, served straight out of its stored zip: the
// entry's bytes are found from the zip's central directory (zip-entries.ts) and
// handed to Express's file sender as a byte range, so Ranges work relative to
// the item and no second copy of any rendered file is kept.
import type { NextFunction, Response } from 'express'
import type { AppContext } from '../../core/context'
import { AppError, fileError } from '../../core/errors'
import { publishedItemId, publishedItemNotFound, snapshotOf } from '../builds/published'
import { zipPath } from '../curation/item-spec'
import type * as repo from '../packs.repository'
import { rangeAwareDone } from './send-with-ranges'
import { storedEntryRange, ZipFormatError } from './zip-entries'

/** Sends one item of a finished build out of its zip, with Range support; 404 when the build holds no such item. */
export async function sendBuildItem(
  ctx: AppContext,
  res: Response,
  next: NextFunction,
  build: repo.BuildJoined,
  itemId: number,
  how: 'inline' | 'attachment',
): Promise<void> {
  if (build.status !== 'done' || !build.zip_path)
    throw new AppError(
      409,
      'BUILD_NOT_DONE',
      `Version ${build.version} is ${build.status}; its items can be fetched once it is done`,
    )
  const spec = snapshotOf(build).items.find((s) => publishedItemId(s) === itemId)
  if (!spec) throw publishedItemNotFound()
  let zip = build.zip_path
  let range: Awaited<ReturnType<typeof storedEntryRange>>
  try {
    zip = await ctx.storage.local(build.zip_path) // with S3, fetched into the working copy first
    range = await storedEntryRange(zip, zipPath(spec))
  } catch (err) {
    if (err instanceof ZipFormatError) throw err
    // Fixed words for file-system errors (FILE_MISSING…); the path goes to the server log only.
    console.error(`[packs] build ${build.id}'s zip unreadable: ${zip}: ${(err as Error).message}`)
    throw fileError(err)
  }
  if (!range) throw publishedItemNotFound()
  const size = range.size
  // send (under res.sendFile) serves [start, end] of the zip as if it were the whole file, Ranges relative to it.
  // No ETag or Last-Modified: those would be the zip's, shared by every item in it.
  res.set('Content-Disposition', `${how}; filename="${spec.fileName}"`)
  const opts = {
    start: range.start,
    end: range.end,
    acceptRanges: true,
    etag: false,
    lastModified: false,
    headers: { 'Content-Type': 'audio/wav', 'Cache-Control': 'private, no-cache' },
  }
  res.sendFile(zip, opts, rangeAwareDone(res, next, size, 'item'))
}
