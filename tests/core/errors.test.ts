// File-system errors reach members as fixed codes and words, never with a server path.
import { describe, expect, it } from 'vitest'
import { fileError, isFileSystemError, publicErrorText } from '../../server/core/errors'

describe('file-system errors', () => {
  it('map to fixed codes and words without the path', async () => {
    const err = await import('node:fs/promises').then((fs) => fs.stat('/no/such/dir/take.wav').catch((e: unknown) => e))
    expect(isFileSystemError(err)).toBe(true)
    const e = fileError(err)
    expect([e.status, e.code]).toEqual([404, 'FILE_MISSING'])
    expect(e.message).not.toContain('/no/such')
    expect(fileError(Object.assign(new Error('x'), { code: 'ENOSPC' })).code).toBe('STORAGE_FULL')
  })

  it('take out paths from stored error text', () => {
    expect(publicErrorText("ENOENT: no such file or directory, open '/srv/strayfield/storage/audio/ab/abc.wav'")).toBe(
      'FILE_MISSING: A file this needs is missing on the server; tell an admin',
    )
    const other = publicErrorText('could not read /srv/strayfield/storage/audio/ab/abc.wav: bad chunk')
    expect(other).not.toContain('/srv')
    expect(other).toMatch(/bad chunk/)
    expect(publicErrorText('The fmt chunk is too short (12 bytes)')).toBe('The fmt chunk is too short (12 bytes)')
  })
})
