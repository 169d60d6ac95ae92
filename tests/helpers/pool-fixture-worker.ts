// A pool worker for tests: serves the real protocol with the real analyzeFile,
// but a path containing "crash-exit" ends the thread, "crash-throw" throws
// outside any promise, "hang" never answers (a busy loop), and "rendezvous" waits until another rendezvous task is
// running in a different worker at the same time (proving concurrency without
// looking at a clock: if the pool ran tasks one by one, the wait would fail).
import { existsSync, readdirSync, writeFileSync } from 'node:fs'
import { basename, dirname, join } from 'node:path'
import { parentPort, threadId } from 'node:worker_threads'
import { analyzeFile } from '../../server/audio/analyze'
import { serveAnalysis } from '../../server/audio/analyze-worker-serve'

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms))

async function rendezvous(path: string): Promise<void> {
  const dir = dirname(path)
  writeFileSync(join(dir, `${basename(path)}.arrived-${threadId}`), '')
  for (let i = 0; i < 1500; i++) {
    const others = readdirSync(dir).filter((f) => f.includes('.arrived-') && !f.endsWith(`-${threadId}`))
    if (others.length > 0) return
    await sleep(20)
  }
  throw new Error('rendezvous: no other task ran at the same time')
}

serveAnalysis(parentPort!, async (path, opts) => {
  if (path.includes('crash-exit')) process.exit(7)
  if (path.includes('hang')) for (;;); // a reader stuck for good: only the pool's silence limit ends it
  if (path.includes('crash-throw')) {
    setImmediate(() => {
      throw new Error('fixture exploded')
    })
    await sleep(60_000)
  }
  if (path.includes('rendezvous') && existsSync(path)) await rendezvous(path)
  return analyzeFile(path, opts)
})
