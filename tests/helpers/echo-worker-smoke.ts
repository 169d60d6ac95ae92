// Run by tests/core/workers.test.ts under plain tsx: starts the echo worker the way the server
// starts its workers and prints this process's Node options and the worker's.
import { startWorker } from '../../server/core/workers'

const w = startWorker(new URL('./echo-worker.ts', import.meta.url))
w.once('message', async (m: { execArgv: string[] }) => {
  process.stdout.write(JSON.stringify({ parent: process.execArgv, worker: m.execArgv }))
  await w.terminate()
})
