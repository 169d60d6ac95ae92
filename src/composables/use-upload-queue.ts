import { reactive } from 'vue'
import { ApiError, upload, type UploadHandle } from '@/api/client'

export interface QueuedUpload {
  key: number
  name: string
  size: number
  state: 'waiting' | 'uploading' | 'done' | 'failed'
  progress: number
  error: string | null
  takeId: number | null
}

const PARALLEL = 3

/** Sends dropped files a few at a time, each with its own progress and its own error. */
export function useUploadQueue(url: () => string, onUploaded: (takeId: number) => void) {
  const items = reactive<QueuedUpload[]>([])
  const files = new Map<number, File>()
  const handles = new Map<number, UploadHandle>()
  let next = 1

  function add(list: FileList | File[]) {
    for (const f of Array.from(list)) {
      const key = next++
      files.set(key, f)
      items.push({ key, name: f.name, size: f.size, state: 'waiting', progress: 0, error: null, takeId: null })
    }
    pump()
  }

  function pump() {
    const busy = items.filter((i) => i.state === 'uploading').length
    for (const item of items.filter((i) => i.state === 'waiting').slice(0, Math.max(0, PARALLEL - busy))) start(item)
  }

  function start(item: QueuedUpload) {
    item.state = 'uploading'
    const h = upload(url(), files.get(item.key)!, (p) => (item.progress = p))
    handles.set(item.key, h)
    h.promise
      .then((body) => {
        const take = (body as { take: { id: number } }).take
        item.state = 'done'
        item.progress = 1
        item.takeId = take.id
        onUploaded(take.id)
      })
      .catch((e: unknown) => {
        item.state = 'failed'
        item.error = e instanceof ApiError ? e.message : String(e)
      })
      .finally(() => {
        files.delete(item.key)
        handles.delete(item.key)
        pump()
      })
  }

  function cancel(key: number) {
    handles.get(key)?.abort()
    const item = items.find((i) => i.key === key)
    if (item && item.state === 'waiting') {
      item.state = 'failed'
      item.error = 'Cancelled'
    }
  }

  const clearFinished = () => {
    for (let i = items.length - 1; i >= 0; i--) if (items[i].state === 'done') items.splice(i, 1)
  }

  return { items, add, cancel, clearFinished }
}
