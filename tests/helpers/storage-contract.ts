import crypto from 'node:crypto'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { text } from 'node:stream/consumers'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { BlobStore } from '../../server/storage/storage'
import { Storage } from '../../server/storage/files'

/**
 * What every BlobStore must do, run against each implementation (local folder here in the
 * main suite, the Ceph S3 gateway in the scaled suite): the app only ever sees this contract.
 */
export function storageContract(name: string, open: (workDir: string) => Promise<BlobStore>) {
  describe(`storage contract: ${name}`, () => {
    let dir: string
    let store: BlobStore
    const file = (name: string, body: string | Buffer) => {
      const p = path.join(dir, 'src', name)
      fs.mkdirSync(path.dirname(p), { recursive: true })
      fs.writeFileSync(p, body)
      return p
    }

    beforeAll(async () => {
      dir = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-contract-'))
      store = await open(path.join(dir, 'store'))
    })
    afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

    it('stores a file and reads it back whole and by inclusive byte ranges', async () => {
      await store.putFile('audio/ab/one.wav', file('one', '0123456789abcdef'))
      expect(await store.size('audio/ab/one.wav')).toBe(16)
      expect(await text(await store.read('audio/ab/one.wav'))).toBe('0123456789abcdef')
      expect(await text(await store.read('audio/ab/one.wav', { start: 3, end: 6 }))).toBe('3456')
      expect(await text(await store.read('audio/ab/one.wav', { start: 15, end: 15 }))).toBe('f')
    })

    it('replaces an object stored under the same key', async () => {
      await store.putFile('derived/take-1/peaks.bin', file('p1', 'first'))
      await store.putFile('derived/take-1/peaks.bin', file('p2', 'second version'))
      expect(await text(await store.read('derived/take-1/peaks.bin'))).toBe('second version')
      expect(await store.size('derived/take-1/peaks.bin')).toBe(14)
    })

    it('answers a missing key with null size and an ENOENT read', async () => {
      expect(await store.size('audio/zz/none.wav')).toBeNull()
      await expect(store.read('audio/zz/none.wav')).rejects.toMatchObject({ code: 'ENOENT' })
      await store.remove('audio/zz/none.wav') // not an error
    })

    it('lists and removes by prefix without touching neighbours', async () => {
      await store.putFile('derived/take-7/a.png', file('a', 'a'))
      await store.putFile('derived/take-7/sub/b.png', file('b', 'b'))
      await store.putFile('derived/take-70/c.png', file('c', 'c'))
      expect(await store.list('derived/take-7/')).toEqual(['derived/take-7/a.png', 'derived/take-7/sub/b.png'])
      await store.removePrefix('derived/take-7/')
      expect(await store.list('derived/take-7/')).toEqual([])
      expect(await store.list('derived/take-70/')).toEqual(['derived/take-70/c.png'])
      await store.remove('derived/take-70/c.png')
      expect(await store.size('derived/take-70/c.png')).toBeNull()
    })

    it('streams a file larger than one multipart part and keeps its SHA-256', async () => {
      const big = crypto.randomBytes(20 * 2 ** 20) // over lib-storage's 16 MiB part size
      await store.putFile('builds/pack-1/big.zip', file('big', big))
      const hash = crypto.createHash('sha256')
      for await (const chunk of await store.read('builds/pack-1/big.zip')) hash.update(chunk)
      expect(hash.digest('hex')).toBe(crypto.createHash('sha256').update(big).digest('hex'))
      const tail = Buffer.concat(
        await (await store.read('builds/pack-1/big.zip', { start: big.length - 100, end: big.length - 1 })).toArray(),
      )
      expect(tail.equals(big.subarray(big.length - 100))).toBe(true)
      await store.remove('builds/pack-1/big.zip')
    })

    it('presigns a link a browser can fetch the object from directly (S3), or says there is none (local)', async () => {
      await store.putFile('builds/pack-2/v1.zip', file('zip', 'zip bytes'))
      const url = await store.presign('builds/pack-2/v1.zip', { expiresSeconds: 60, downloadName: 'Pack v1.zip' })
      if (store.kind === 'local') return expect(url).toBeNull()
      const res = await fetch(url!)
      expect(res.status).toBe(200)
      expect(await res.text()).toBe('zip bytes')
      expect(res.headers.get('content-disposition')).toContain('Pack%20v1.zip')
      const part = await fetch(url!, { headers: { Range: 'bytes=4-8' } })
      expect([part.status, await part.text()]).toEqual([206, 'bytes'])
    })

    it('refuses keys that would leave the storage root', async () => {
      for (const bad of ['../x', '/etc/passwd', 'audio/../../x', 'a//b'])
        await expect(store.size(bad), bad).rejects.toThrow(/bad storage key/)
    })

    it('gives the app a working copy: local() fetches once, persist() sends, remove() deletes both', async () => {
      // Locally the store's folder is the working copy itself; with S3 the copy is a folder of its own.
      const storage = new Storage(path.join(dir, store.kind === 'local' ? 'store' : 'work'), store)
      fs.mkdirSync(path.dirname(storage.abs('audio/cd/two.wav')), { recursive: true })
      fs.writeFileSync(storage.abs('audio/cd/two.wav'), 'take bytes')
      await storage.persist('audio/cd/two.wav')
      expect(await storage.exists('audio/cd/two.wav')).toBe(true)
      if (storage.remote) {
        fs.rmSync(storage.abs('audio/cd/two.wav'))
        const [a, b] = await Promise.all([storage.local('audio/cd/two.wav'), storage.local('audio/cd/two.wav')])
        expect(a).toBe(b)
      }
      expect(fs.readFileSync(await storage.local('audio/cd/two.wav'), 'utf8')).toBe('take bytes')
      await storage.remove('audio/cd/two.wav')
      expect(await storage.exists('audio/cd/two.wav')).toBe(false)
      expect(fs.existsSync(storage.abs('audio/cd/two.wav'))).toBe(false)
    })
  })
}
