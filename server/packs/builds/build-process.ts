// Entry of the build process: one per pack build, started by the 'build-pack'
// job (build.job.ts) as plain JavaScript (server/core/workers.ts). It receives a
// BuildOrder, writes the zip (build-writer.ts) with its render threads, reports
// progress, and answers with the result or the failure; then it exits.
//
// Why a process of its own: a build runs for minutes at full speed on every core
// it is given; away from the API its memory is its own (and measurable: it
// reports its peak), a crash in it cannot take the API down, and it loads only
// the render and zip code, not the server's.
import { errorInfo, type ErrorInfo } from '../../core/thread-errors'
import { BuildStopped, ItemFailure, writeBuild, type BuildOrder, type BuildOutput } from './build-writer'

export type ToBuildProcess = { type: 'order'; order: BuildOrder } | { type: 'stop' }

export type FromBuildProcess =
  | { type: 'frames'; k: number; frames: number }
  | { type: 'done'; output: BuildOutput; maxRssKb: number }
  | { type: 'stopped' }
  | { type: 'failed'; position: number | null; error: ErrorInfo }

const send = (m: FromBuildProcess) =>
  new Promise<void>((resolve) => {
    if (!process.send) return resolve()
    process.send(m, undefined, undefined, () => resolve())
  })

if (!process.send) throw new Error('build-process must be started with an IPC channel (child_process.fork)')

let stopped = false
// Frames are reported at most every 100 ms per item.
const lastSent = new Map<number, number>()

process.on('message', (m: ToBuildProcess) => {
  if (m.type === 'stop') {
    stopped = true
    return
  }
  void run(m.order)
})
// The parent going away (it stopped or crashed) stops the build too.
process.on('disconnect', () => {
  stopped = true
})

async function run(order: BuildOrder): Promise<void> {
  let reply: FromBuildProcess
  try {
    const output = await writeBuild(order, {
      onFrames(k, frames) {
        const t = Date.now()
        if (t - (lastSent.get(k) ?? 0) < 100) return
        lastSent.set(k, t)
        void send({ type: 'frames', k, frames })
      },
      shouldStop: () => stopped,
    })
    reply = { type: 'done', output, maxRssKb: process.resourceUsage().maxRSS }
  } catch (err) {
    if (err instanceof BuildStopped) reply = { type: 'stopped' }
    else if (err instanceof ItemFailure) reply = { type: 'failed', position: err.position, error: errorInfo(err.cause) }
    else reply = { type: 'failed', position: null, error: errorInfo(err) }
  }
  // A parent gone away has nobody to answer (writeBuild has cleaned up either way).
  if (!process.connected) return
  await send(reply)
  if (process.connected) process.disconnect()
}
