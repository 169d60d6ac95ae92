// Writes one build's zip: renders the frozen items in a streaming way, measuring
// each rendered file on the samples it writes, and stores them with
// manifest.json, manifest.csv and LICENSE.txt. It runs as the 'pack-build' task
// on the audio-task pool (server/work/), away from the API's event loop, and
// knows nothing of the database: it gets everything in a BuildOrder and gives
// back what the job records.
//
// Renders run ahead of the zip (`renderThreads` at a time, as 'render' tasks on
// other threads of the same pool) while this thread writes the zip in pack
// order, hashing each file as it reads it; each temp render is deleted as soon
// as the zip has read it. A failure names the item (ItemFailure) and leaves
// neither a zip nor a temp render behind. Stopping is the task's AbortSignal:
// the pool stops this thread and the renders, and the job sweeps what they left.
import fs from 'node:fs/promises'
import path from 'node:path'
import type { ManifestItem } from '@shared/schemas/packs'
import { presetOf, profileSummary } from '@shared/schemas/packs-profiles'
import type { PlainRenderRequest, RenderResult } from '../../render/render'
import { round2 } from '../../render/settings'
import { errorInfo, type ErrorInfo } from '../../core/thread-errors'
import { expectedFrames, zipPath, type BuildSnapshot } from '../curation/item-spec'
import { manifestCsv, PackZip, type ZipEntryResult } from './pack-zip'
import { itemCurve, manifestModulation, modulationFileName } from '../../modulation/pack-modulation'

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
  /** Items rendered at once, ahead of the zip (at least one). */
  renderThreads: number
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
  /** Renders one item to `outPath` (on another thread); `onFrames` gets the frames written so far. */
  render(req: PlainRenderRequest, outPath: string, onFrames: (frames: number) => void): Promise<RenderResult>
  /** Fraction 0..0.99 of the frames to render, at most every 1 % or second. */
  onProgress(fraction: number): void
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

export function licenceFile(snap: BuildSnapshot, version: number): string {
  return `${snap.pack.name}, version ${version}\n\n${snap.pack.licenceText.trim()}\n`
}

/** Turns the frames each item has written into one fraction, reported at most every 1 % or second. */
function progressOf(snap: BuildSnapshot, report: (fraction: number) => void) {
  const total = snap.items.reduce((n, s) => n + expectedFrames(s), 0)
  const framesOf = new Float64Array(snap.items.length)
  let done = 0
  let lastReported = 0
  let lastTime = 0
  return (k: number, frames: number) => {
    done += frames - framesOf[k]
    framesOf[k] = frames
    const p = Math.min(0.99, done / total)
    const t = Date.now()
    if (p - lastReported < 0.01 && t - lastTime < 1000) return
    lastReported = p
    lastTime = t
    report(p)
  }
}

export async function writeBuild(order: BuildOrder, hooks: WriterHooks): Promise<BuildOutput> {
  const { snap } = order
  const createdAt = new Date(order.createdAt)
  await fs.rm(order.tmpZip, { force: true })
  await fs.rm(order.workDir, { recursive: true, force: true })
  await fs.mkdir(order.workDir, { recursive: true })
  await fs.mkdir(path.dirname(order.finalZip), { recursive: true })

  const onFrames = progressOf(snap, hooks.onProgress)
  const zip = PackZip.create(order.tmpZip, order.finalZip, createdAt)
  const parallel = Math.max(1, order.renderThreads)
  const inflight: Promise<RenderResult>[] = []
  let next = 0
  const startNext = () => {
    if (next >= snap.items.length) return
    const k = next++
    const p = hooks.render(order.requests[k], path.join(order.workDir, snap.items[k].fileName), (f) => onFrames(k, f))
    p.catch(() => undefined) // awaited in order below; this only keeps an early failure from being unhandled
    inflight.push(p)
  }

  let current: number | null = null
  // Curve files are named beside their audio, never over another entry.
  const taken = new Set(snap.items.map((s) => zipPath(s).toLowerCase()))
  const maxNameLength = snap.pack.settings.profile?.maxNameLength ?? null
  try {
    const items: BuiltItem[] = []
    for (let i = 0; i < parallel; i++) startNext()
    for (let k = 0; k < snap.items.length; k++) {
      const spec = snap.items[k]
      current = spec.position
      const r = await inflight[k]
      onFrames(k, expectedFrames(spec))
      startNext()
      const entry = await zip.addFile(zipPath(spec), r.path)
      await fs.rm(r.path, { force: true })
      const modulation = []
      if (spec.modulation) {
        // On this thread, over the item's own range: the curve lines up with the audio beside it.
        const made = await itemCurve({
          path: order.requests[k].sourcePath,
          startSeconds: spec.startSeconds ?? 0,
          endSeconds: spec.endSeconds ?? spec.takeDurationSeconds,
          modulation: spec.modulation,
          label: `${snap.pack.name} item ${spec.position} (${spec.outputName})`,
        })
        const name = modulationFileName(spec.outputName, spec.modulation, maxNameLength, taken)
        const file = zipPath({ folder: spec.folder, fileName: name })
        await zip.addBuffer(file, Buffer.from(made.bytes))
        modulation.push(manifestModulation(file, spec.modulation, made))
      }
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
          modulation,
        },
        bytes: entry.bytes,
        gainDb: r.gainDb,
        integratedLufs: r.levels.integratedLufs,
        truePeakDbtp: r.levels.truePeakDbtp,
        loudnessRangeLu: r.levels.loudnessRangeLu,
      })
    }
    current = null
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
    // Renders already asked for finish (or fail) before their files are swept.
    await Promise.allSettled(inflight)
    await zip.abort()
    await fs.rm(order.workDir, { recursive: true, force: true })
    if (current !== null) throw new ItemFailure(current, err)
    throw err
  }
}

/** What the 'pack-build' task answers: the output, or the failure with the item it names (errors cross threads as fields). */
export type BuildAnswer = { ok: true; output: BuildOutput } | { ok: false; position: number | null; error: ErrorInfo }

export async function buildTask(order: BuildOrder, hooks: WriterHooks): Promise<BuildAnswer> {
  try {
    return { ok: true, output: await writeBuild(order, hooks) }
  } catch (err) {
    if (err instanceof ItemFailure) return { ok: false, position: err.position, error: errorInfo(err.cause) }
    return { ok: false, position: null, error: errorInfo(err) }
  }
}
