// File-system errors of the upload path in the one error shape. A full disk is
// the server's state, not the client's mistake: 507 with words a person can act on.
import { AppError } from '../core/errors'

const FULL = new Set(['ENOSPC', 'EDQUOT'])

export const isStorageFull = (err: unknown): boolean => FULL.has((err as NodeJS.ErrnoException | null)?.code ?? '')

export const storageFull = () =>
  new AppError(
    507,
    'STORAGE_FULL',
    'The server has no room left to store this upload; nothing was kept. Try again once space has been freed.',
  )
