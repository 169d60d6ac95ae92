// Writes one build's zip: renders the frozen items in a streaming way, measuring
// each rendered file on the samples it writes, and stores them with
// manifest.json, manifest.csv and LICENSE.txt. It runs in the build process
// (build-process.ts), away from the API, and knows nothing of the database: it
// gets everything in a BuildOrder and gives back what the job records.
//
// Renders run ahead of the zip (one per render thread) while this thread writes
// the zip in pack order, hashing each file as it reads it; each temp render is
// deleted as soon as the zip has read it. A failure names the item (ItemFailure)
// and leaves neither a zip nor a temp render behind.
import fs from 'node:fs/promises'
import path from 'node:path'
import type { ManifestItem } from '@shared/schemas/packs'
import { presetOf, profileSummary } from '@shared/schemas/packs-profiles'
import {
  renderItem,
  RenderStopped,
  type PlainRenderRequest,
  type RenderRequest,
  type RenderResult,
} from '../../render/render'
import { createRenderPool } from '../../render/render-pool'
import { round2 } from '../../render/settings'
import { zipPath, type BuildSnapshot } from '../curation/item-spec'
import { manifestCsv, PackZip, type ZipEntryResult } from './pack-zip'

export interface BuildOrder {
  buildId: number
  version: number
  /** ISO time the build was asked for: zip entry dates and bext. */
  createdAt: string
  snap: BuildSnapshot
  /** One per item of snap.items, in order. */
  requests: PlainRenderRequest[]
  tmpZip: string
  finalZip: string
  workDir: string
  /** Render worker threads (0: render in the writer's own thread). */
  renderThreads: number
  /** The render worker's module (server/core/workers.ts), when renderThreads > 0. */
  renderWorker?: string
}

export interface BuiltItem {
  manifest: ManifestItem
  bytes: number
  gainDb: number
  integratedLufs: number | null
  truePeakDbtp: number | null
  loudnessRangeLu: number | null
}

export interface BuildOutput {
  zip: ZipEntryResult
  items: BuiltItem[]
}

export interface WriterHooks {
  /** Frames rendered so far of item k. */
  onFrames(k: number, frames: number): void
  shouldStop(): boolean
}

/** The item at `position` (1-based) failed; `cause` says why. */
export class ItemFailure extends Error {
  constructor(
    readonly position: number,
    override readonly cause: unknown,
  ) {
    super(`item ${position} failed: ${(cause as Error)?.message ?? String(cause)}`)
  }
}

export class BuildStopped extends Error {
  constructor() {
    super('build stopped with the server; it resumes at the next start')
  }
}

export function licenceFile(snap: BuildSnapshot, version: number): string {
  return `${snap.pack.name}, version ${version}\n\n${snap.pack.licenceText.trim()}\n`
}

interface Renderer {
  render(req: RenderRequest, outPath: string, signal: { stopped: boolean }): Promise<RenderResult>
  close(): Promise<void>
}

function rendererFor(order: BuildOrder): Renderer {
  if (order.renderThreads > 0)
    return createRenderPool(order.renderThreads, order.renderWorker ? new URL(order.renderWorker) : undefined)
  return {
    // Temp renders are read into the zip and deleted: only the zip is fsynced.
    render: (req, outPath, signal) =>
      renderItem({ ...req, shouldStop: () => signal.stopped }, outPath, { durable: false }),
    close: async () => undefined,
  }
}

export async function writeBuild(order: BuildOrder, hooks: WriterHooks): Promise<BuildOutput> {
  const { snap } = order
  const createdAt = new Date(order.createdAt)
  await fs.rm(order.tmpZip, { force: true })
  await fs.rm(order.workDir, { recursive: true, force: true })
  await fs.mkdir(order.workDir, { recursive: true })
  await fs.mkdir(path.dirname(order.finalZip), { recursive: true })

  const signal = { stopped: false }
  const stopWatch = setInterval(() => {
    if (hooks.shouldStop()) signal.stopped = true
  }, 50)
  const renderer = rendererFor(order)
  const zip = PackZip.create(order.tmpZip, order.finalZip, createdAt)
  const parallel = Math.max(1, order.renderThreads)
  const inflight: Promise<RenderResult>[] = []
  let next = 0
  const startNext = () => {
    if (next >= snap.items.length) return
    const k = next++
    const req: RenderRequest = { ...order.requests[k], onFrames: (f) => hooks.onFrames(k, f) }
    const p = renderer.render(req, path.join(order.workDir, snap.items[k].fileName), signal)
    p.catch(() => undefined) // awaited in order below; this only keeps an early failure from being unhandled
    inflight.push(p)
  }

  let current: number | null = null
  try {
    const items: BuiltItem[] = []
    for (let i = 0; i < parallel; i++) startNext()
    for (let k = 0; k < snap.items.length; k++) {
      const spec = snap.items[k]
      current = spec.position
      const r = await inflight[k]
      if (signal.stopped) throw new BuildStopped()
      startNext()
      const entry = await zip.addFile(zipPath(spec), r.path)
      await fs.rm(r.path, { force: true })
      items.push({
        manifest: {
          file: zipPath(spec),
          durationSeconds: r.durationSeconds,
          sampleRate: r.sampleRate,
          bitDepth: r.bitDepth,
          channels: r.channels,
          integratedLufs: round2(r.levels.integratedLufs),
          truePeakDbtp: round2(r.levels.truePeakDbtp),
          loudnessRangeLu: round2(r.levels.loudnessRangeLu),
          underTargetDb: r.underTargetDb,
          sources: spec.sources,
          tags: spec.tags,
          takeId: spec.takeId,
          regionName: spec.regionName ?? null,
          licence: snap.pack.licenceText,
          sha256: entry.sha256,
          originalName: `${spec.fullName ?? spec.outputName}.wav`,
          sourceFile: spec.sourceFile,
        },
        bytes: entry.bytes,
        gainDb: r.gainDb,
        integratedLufs: r.levels.integratedLufs,
        truePeakDbtp: r.levels.truePeakDbtp,
        loudnessRangeLu: r.levels.loudnessRangeLu,
      })
    }
    current = null
    if (signal.stopped) throw new BuildStopped()
    const manifest = items.map((i) => i.manifest)
    const json = {
      pack: {
        id: snap.pack.id,
        name: snap.pack.name,
        description: snap.pack.description,
        licence: snap.pack.licenceText,
        namingTemplate: snap.pack.namingTemplate,
        settings: snap.pack.settings,
      },
      // The delivery format in words and fields; null: the files keep their takes' rates and channels.
      profile: snap.pack.settings.profile
        ? {
            ...snap.pack.settings.profile,
            preset: presetOf(snap.pack.settings.profile),
            summary: profileSummary(snap.pack.settings.profile),
          }
        : null,
      build: {
        id: order.buildId,
        version: order.version,
        createdAt: order.createdAt,
        itemCount: manifest.length,
        generator: 'Strayfield',
      },
      items: manifest,
    }
    await zip.addBuffer('manifest.json', Buffer.from(JSON.stringify(json, null, 2) + '\n'))
    await zip.addBuffer('manifest.csv', Buffer.from(manifestCsv(manifest)))
    await zip.addBuffer('LICENSE.txt', Buffer.from(licenceFile(snap, order.version)))
    const done = await zip.finish()
    await fs.rm(order.workDir, { recursive: true, force: true })
    return { zip: done, items }
  } catch (err) {
    signal.stopped = true
    await Promise.allSettled(inflight)
    await zip.abort()
    await fs.rm(order.workDir, { recursive: true, force: true })
    if (err instanceof BuildStopped || err instanceof RenderStopped) throw new BuildStopped()
    if (current !== null) throw new ItemFailure(current, err)
    throw err
  } finally {
    clearInterval(stopWatch)
    await renderer.close()
  }
}
