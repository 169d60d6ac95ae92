// Worker-thread entry of the render pool (render-pool.ts): renders one request
// at a time, reports frames now and then, and stops between blocks when asked.
import { parentPort } from 'node:worker_threads'
import { errorInfo } from '../core/thread-errors'
import { renderItem } from './render'
import type { RenderTask, RenderReply } from './render-pool'

const port = parentPort
if (!port) throw new Error('render-worker must run in a worker thread')

const stopped = new Set<number>()

port.on('message', (m: RenderTask | { type: 'stop'; id: number }) => {
  if (m.type === 'stop') {
    stopped.add(m.id)
    return
  }
  const reply = (r: RenderReply) => port.postMessage(r)
  let sent = 0
  renderItem(
    {
      ...m.req,
      onFrames: (frames) => {
        if (frames - sent < 1 << 18) return // about every 5 s of 48 kHz audio
        sent = frames
        reply({ type: 'frames', id: m.id, frames })
      },
      shouldStop: () => stopped.has(m.id),
    },
    m.outPath,
    { durable: false }, // a temp render of a build: zipped and deleted, only the zip is fsynced
  )
    .then(
      (result) => reply({ type: 'done', id: m.id, result }),
      (err: unknown) => {
        reply({ type: 'error', id: m.id, error: errorInfo(err) })
      },
    )
    .finally(() => stopped.delete(m.id))
})
