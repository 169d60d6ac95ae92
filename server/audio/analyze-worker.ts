// Worker-thread entry of the analysis pool (see pool.ts).
import { parentPort } from 'node:worker_threads'
import { analyzeFile } from './analyze'
import { serveAnalysis } from './analyze-worker-serve'

if (!parentPort) throw new Error('analyze-worker must run in a worker thread')
serveAnalysis(parentPort, analyzeFile)
