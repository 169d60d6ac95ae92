// Worker threads started from the TypeScript sources, as plain JavaScript.
//
// Node cannot run a .ts file in a worker by itself, and loading it through tsx
// (tsx's tsImport in the worker) gives every worker its own module-hooks thread
// and transpiler: measured at 60–90 MB of memory per worker, which is what a
// pack build or an analysis has to spare. Instead the entry is bundled once per
// process with esbuild (the transpiler tsx itself runs on) into one ES module
// under node_modules/.cache/strayfield/workers, named by the hash of its code,
// and the worker runs that file: a plain module graph of ~20 MB. Packages stay
// external (imported from node_modules as usual), so a bundle holds our code only.
// A built server (.js files) starts its workers from the files themselves.
import { createHash } from 'node:crypto'
import { mkdirSync, renameSync, writeFileSync, existsSync } from 'node:fs'
import { join } from 'node:path'
import { fileURLToPath, pathToFileURL } from 'node:url'
import { Worker, type WorkerOptions } from 'node:worker_threads'
import { buildSync } from 'esbuild'

const root = fileURLToPath(new URL('../../', import.meta.url))
const cacheDir = join(root, 'node_modules', '.cache', 'strayfield', 'workers')
const bundles = new Map<string, URL>()

/** The plain-JavaScript module a .ts worker entry runs as (bundled on first use in this process). */
export function workerModule(entry: URL): URL {
  if (!entry.pathname.endsWith('.ts')) return entry
  const kept = bundles.get(entry.href)
  if (kept) return kept
  const file = fileURLToPath(entry)
  const out = buildSync({
    entryPoints: [file],
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    packages: 'external',
    tsconfig: join(root, 'tsconfig.json'),
    absWorkingDir: root, // the bundle's path comments, and so its hash, do not depend on the cwd
    write: false,
    logLevel: 'silent',
  }).outputFiles[0].text
  const name = file.split(/[\\/]/).pop()!.replace(/\.ts$/, '')
  const target = join(cacheDir, `${name}-${createHash('sha256').update(out).digest('hex').slice(0, 16)}.mjs`)
  if (!existsSync(target)) {
    mkdirSync(cacheDir, { recursive: true })
    // Another process may be writing the same bundle: each writes its own temp name, the rename is atomic.
    const tmp = `${target}.${process.pid}.${Math.random().toString(36).slice(2)}.part`
    writeFileSync(tmp, out)
    renameSync(tmp, target)
  }
  const url = pathToFileURL(target)
  bundles.set(entry.href, url)
  return url
}

/** Starts a worker thread on `entry` (a .ts source beside the caller, or a built .js file). */
export function startWorker(entry: URL, options?: WorkerOptions): Worker {
  return new Worker(workerModule(entry), options)
}
