// The zip through a share link. HEAD is answered from the row (nothing counted,
// the file not touched); GET counts a new download once the file is known to
// exist and records how far it got, so a cut-off download can be resumed
// without counting again (share-ranges.ts).
import type { NextFunction, Request, Response } from 'express'
import type { AppContext } from '../../core/context'
import { buildFileName } from '../curation/naming'
import { CONDITIONAL_HEADERS } from './share-ranges'
import { shareDownload, shareHead } from './share.service'
import { sendWithRanges } from './send-with-ranges'

export async function sendShareDownload(
  ctx: AppContext,
  token: string,
  req: Request,
  res: Response,
  next: NextFunction,
): Promise<void> {
  if (req.method === 'HEAD') {
    const head = await shareHead(ctx, token)
    res
      .status(200)
      .set({
        'Content-Type': 'application/zip',
        'Content-Length': String(head.sizeBytes),
        'Accept-Ranges': 'bytes',
        'Content-Disposition': `attachment; filename="${head.fileName}"`,
        'Cache-Control': 'private, no-store',
      })
      .end()
    return
  }
  // send must serve exactly what was planned and counted: no If-Range, no 304.
  for (const h of CONDITIONAL_HEADERS) delete req.headers[h]
  const dl = await shareDownload(ctx, token, req.headers.range)
  if (!dl.range) {
    res
      .status(416)
      .set('Content-Range', `bytes */${dl.sizeBytes}`)
      .json({
        error: {
          code: 'RANGE_NOT_SATISFIABLE',
          message: `Ask for one byte range of the file's ${dl.sizeBytes} bytes, as "Range: bytes=START-END", or for the whole file without a Range`,
          details: { sizeBytes: dl.sizeBytes },
        },
      })
    return
  }
  const { start, end } = dl.range
  const written0 = req.socket.bytesWritten
  let recorded = false
  const record = (reached: number) => {
    if (recorded) return
    recorded = true
    dl.served(reached).catch((err) => console.error('[share] could not record download progress', err))
  }
  res.on('finish', () => record(end + 1))
  // Cut off: how far it got, as far as this server can tell (what the socket took, headers included).
  res.on('close', () => record(Math.min(end + 1, start + Math.max(0, req.socket.bytesWritten - written0))))
  sendWithRanges(res, next, dl.path, dl.sizeBytes, {
    contentType: 'application/zip',
    downloadName: buildFileName(dl.build.pack_name, dl.build.version),
    cache: 'private, no-store',
  })
}
