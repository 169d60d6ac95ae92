// A worker for tests/core/workers.test.ts: answers with the Node options it was started with.
import { parentPort } from 'node:worker_threads'

parentPort?.postMessage({ execArgv: process.execArgv })
