// Finding a stored entry's bytes inside a zip (server/packs/delivery/zip-entries.ts), the
// way single pack items are served. Zips made by Info-ZIP zip (Debian), plain and
// with -fz (ZIP64 records, PKWARE APPNOTE 4.3.14–4.3.15, 4.5.3); the offsets
// are checked against the files Info-ZIP unzip -p extracts.
import { execFileSync } from 'node:child_process'
import { randomBytes } from 'node:crypto'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { storedEntryRange, zipEntries } from '../../server/packs/delivery/zip-entries'

let dir: string
const files = {
  'first.wav': randomBytes(5000),
  'second take.wav': randomBytes(70_001),
  'LICENSE.txt': Buffer.from('words\n'),
}

beforeAll(() => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'zip-entries-'))
  for (const [name, bytes] of Object.entries(files)) fs.writeFileSync(path.join(dir, name), bytes)
  const names = Object.keys(files)
  execFileSync('zip', ['-q', '-0', '-X', 'plain.zip', ...names], { cwd: dir })
  execFileSync('zip', ['-q', '-0', '-X', '-fz', 'zip64.zip', ...names], { cwd: dir })
  fs.writeFileSync(path.join(dir, 'notes.txt'), 'words that repeat\n'.repeat(1000))
  execFileSync('zip', ['-q', '-9', '-X', 'deflated.zip', 'notes.txt'], { cwd: dir })
})
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

describe('stored zip entries', () => {
  for (const zip of ['plain.zip', 'zip64.zip']) {
    it(`finds every entry's data in ${zip}, the same bytes unzip -p gives`, async () => {
      const file = path.join(dir, zip)
      expect([...(await zipEntries(file)).keys()].sort()).toEqual(Object.keys(files).sort())
      const whole = fs.readFileSync(file)
      for (const name of Object.keys(files)) {
        const r = (await storedEntryRange(file, name))!
        const extracted = execFileSync('unzip', ['-p', file, name])
        expect(r.size).toBe(extracted.length)
        expect(whole.subarray(r.start, r.end + 1).equals(extracted)).toBe(true)
      }
      expect(await storedEntryRange(file, 'missing.wav')).toBeNull()
    })
  }

  it('refuses a compressed entry (it cannot be served as it lies)', async () => {
    await expect(storedEntryRange(path.join(dir, 'deflated.zip'), 'notes.txt')).rejects.toThrow(/compressed/)
  })

  it('refuses a file that is not a zip', async () => {
    await expect(zipEntries(path.join(dir, 'first.wav'))).rejects.toThrow(/end of central directory/)
  })
})
