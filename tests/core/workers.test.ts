// Workers start from the TypeScript sources as plain JavaScript bundles
// (server/core/workers.ts). A bundle holds only our code: each package import
// is an absolute URL, so the bundle runs from any folder (the temp folder when
// node_modules is read-only), and a worker loads no tsx.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { pathToFileURL } from 'node:url'
import { Worker } from 'node:worker_threads'
import { describe, expect, it } from 'vitest'
import { workerModule } from '../../server/core/workers'

/** The audio-task pool's worker entry (server/work/audio-worker.ts). */
const entry = new URL('../../server/work/audio-worker.ts', import.meta.url)

describe('bundled workers', () => {
  const bundle = workerModule(entry)
  const code = fs.readFileSync(bundle, 'utf8')

  it('import packages by absolute file URL and builtins by node: name, nothing bare', () => {
    const specs = [...code.matchAll(/\bfrom\s*"([^"]+)"|\bimport\s*\(\s*"([^"]+)"/g)].map((m) => m[1] ?? m[2])
    expect(specs.length).toBeGreaterThan(0)
    for (const s of specs) expect(s).toMatch(/^(node:|file:\/\/)/)
    expect(code).not.toMatch(/from\s*"tsx|from\s*"zod/)
  })

  it('run when copied outside the project, and answer a render task with an error for a missing file', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'sf-bundle-'))
    const copy = path.join(dir, 'audio-worker.mjs')
    fs.copyFileSync(bundle, copy)
    // The way piscina runs a task: import the module, call its default export with the task.
    const script = `
      const { parentPort, workerData, MessageChannel } = require('node:worker_threads')
      import(workerData.module).then(async (m) => {
        const { port2 } = new MessageChannel()
        parentPort.postMessage(await m.default({ kind: 'render', input: workerData.input, port: port2 }))
      })`
    const input = {
      outPath: path.join(dir, 'out.wav'),
      req: {
        sourcePath: path.join(dir, 'missing.wav'),
        startSeconds: null,
        endSeconds: null,
        kind: 'one-shot',
        settings: {},
        metadata: {},
      },
    }
    const w = new Worker(script, { eval: true, workerData: { module: pathToFileURL(copy).href, input } })
    try {
      const reply = await new Promise<{ ok: boolean; error?: { code?: string } }>((resolve, reject) => {
        w.once('message', resolve)
        w.once('error', reject)
      })
      expect(reply.ok).toBe(false)
      expect(reply.error?.code).toBe('ENOENT')
    } finally {
      await w.terminate()
      fs.rmSync(dir, { recursive: true, force: true })
    }
  })

  it('is the same file for the same code (named by its hash), however often it is asked for', () => {
    expect(workerModule(entry).href).toBe(bundle.href)
    expect(path.basename(bundle.pathname)).toMatch(/^audio-worker-[0-9a-f]{16}\.mjs$/)
  })

  it("start without the parent's Node options: under tsx its loader would load into every worker", () => {
    const script = new URL('../helpers/echo-worker-smoke.ts', import.meta.url).pathname
    const out = JSON.parse(execFileSync('npx', ['--prefix', process.cwd(), 'tsx', script], { encoding: 'utf8' })) as {
      parent: string[]
      worker: string[]
    }
    expect(out.parent.join(' ')).toMatch(/tsx/) // the server's own process runs under tsx
    expect(out.worker).toEqual([])
  })
})
