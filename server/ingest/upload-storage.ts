import fs from 'node:fs'
import { pipeline } from 'node:stream/promises'
import type { Request } from 'express'
import type { StorageEngine } from 'multer'
import type { Storage } from '../core/storage'
import { hashingTap } from '../core/hash-tap'

export interface StreamedFile {
  path: string
  size: number
  sha256: string
}

/**
 * A multer storage engine that streams the upload straight to a temporary file
 * under storage/incoming while hashing it, so a 4 GiB take never sits in memory
 * and its SHA-256 is known the moment the last byte lands. multer calls
 * `_removeFile` when a request is refused or cut off, so no partial file stays.
 */
export function hashingDiskStorage(storage: Storage): StorageEngine {
  return {
    _handleFile(_req: Request, file, cb) {
      const target = storage.incomingPath()
      const { tap, result } = hashingTap()
      pipeline(file.stream, tap, fs.createWriteStream(target, { flags: 'wx' }))
        .then(() => cb(null, { path: target, ...result() } as Partial<Express.Multer.File>))
        .catch((err) => {
          fs.rm(target, { force: true }, () => cb(err))
        })
    },
    _removeFile(_req, file, cb) {
      fs.rm(file.path, { force: true }, (err) => cb(err))
    },
  }
}
