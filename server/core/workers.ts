// Worker threads started from the TypeScript sources, as plain JavaScript.
//
// Node cannot run a .ts file in a worker by itself, and loading it through tsx
// (tsx's tsImport in the worker) gives every worker its own module-hooks thread
// and transpiler: measured at 60–90 MB of memory per worker, which is what a
// pack build or an analysis has to spare. Instead the entry is bundled once per
// process with esbuild (the transpiler tsx itself runs on) into one ES module,
// named by the hash of its code, and the worker runs that file: a plain module
// graph of ~20 MB. Packages stay external, imported by the absolute URL Node
// resolves for them from here, so a bundle holds our code only and runs from
// any folder: node_modules/.cache/strayfield/workers, or the system's temp
// folder when node_modules is read-only (a locked-down deployment).
// A built server (.js files) starts its workers from the files themselves.
import { createHash } from 'node:crypto'
import { createRequire } from 'node:module'
import { accessSync, constants, existsSync, mkdirSync, renameSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { fileURLToPath, pathToFileURL } from 'node:url'
import { Worker, type WorkerOptions } from 'node:worker_threads'

const root = fileURLToPath(new URL('../../', import.meta.url))
const bundles = new Map<string, URL>()

/**
 * The bundle with each package import pointed at the absolute URL Node resolves for it from here
 * (esbuild leaves `packages: 'external'` imports as bare names, which resolve only from inside the
 * project; its metafile lists them).
 */
function withPackageUrls(code: string, imports: { path: string; external?: boolean }[]): string {
  const bare = new Set(imports.filter((i) => i.external && !i.path.startsWith('node:')).map((i) => i.path))
  return code.replace(/(\bfrom\s*|\bimport\s*\(\s*|\bimport\s+)"([^"]+)"/g, (all, lead: string, spec: string) =>
    bare.has(spec) ? `${lead}${JSON.stringify(import.meta.resolve(spec))}` : all,
  )
}

function cacheDir(): string {
  const inModules = join(root, 'node_modules', '.cache', 'strayfield', 'workers')
  try {
    mkdirSync(inModules, { recursive: true })
    accessSync(inModules, constants.W_OK)
    return inModules
  } catch {
    const inTmp = join(tmpdir(), `strayfield-workers-${process.getuid?.() ?? 'user'}`)
    mkdirSync(inTmp, { recursive: true })
    return inTmp
  }
}

/** The plain-JavaScript module a .ts worker entry runs as (bundled on first use in this process). */
export function workerModule(entry: URL): URL {
  if (!entry.pathname.endsWith('.ts')) return entry
  const kept = bundles.get(entry.href)
  if (kept) return kept
  const file = fileURLToPath(entry)
  // Loaded when first needed: code that only starts bundled workers (the build process) never loads it.
  const { buildSync } = createRequire(import.meta.url)('esbuild') as typeof import('esbuild')
  const built = buildSync({
    entryPoints: [file],
    bundle: true,
    platform: 'node',
    format: 'esm',
    target: 'node20',
    packages: 'external',
    metafile: true,
    tsconfig: join(root, 'tsconfig.json'),
    absWorkingDir: root, // the bundle's path comments, and so its hash, do not depend on the cwd
    write: false,
    logLevel: 'silent',
  })
  const out = withPackageUrls(built.outputFiles[0].text, Object.values(built.metafile.outputs)[0]?.imports ?? [])
  const name = file.split(/[\\/]/).pop()!.replace(/\.ts$/, '')
  const target = join(cacheDir(), `${name}-${createHash('sha256').update(out).digest('hex').slice(0, 16)}.mjs`)
  if (!existsSync(target)) {
    // Another process may be writing the same bundle: each writes its own temp name, the rename is atomic.
    const tmp = `${target}.${process.pid}.${Math.random().toString(36).slice(2)}.part`
    writeFileSync(tmp, out)
    renameSync(tmp, target)
  }
  const url = pathToFileURL(target)
  bundles.set(entry.href, url)
  return url
}

/**
 * Starts a worker thread on `entry` (a .ts source beside the caller, or a built .js file). Without
 * the parent's Node options: under tsx they would load its loader into every worker (~12 MB each).
 */
export function startWorker(entry: URL, options?: WorkerOptions): Worker {
  return new Worker(workerModule(entry), { execArgv: [], ...options })
}
