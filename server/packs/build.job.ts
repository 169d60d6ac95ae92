// The durable 'build-pack' job: renders a build's frozen items one by one in a
// streaming way, measuring each rendered file on the samples it writes, and
// stores them with manifest.json, manifest.csv and LICENSE.txt in one zip.
//
// Renders run ahead of the zip (up to RenderExecutor.parallel at once, in
// worker threads when the executor has them) while the zip takes the finished
// files in pack order; each temp render is deleted as soon as the zip has read
// it. A failure names the item and why, and leaves neither a zip nor a temp
// render behind. A job interrupted by a stop or a crash is queued again by the
// job runner at the next start and re-runs from scratch (leftovers of the
// interrupted attempt are swept first).
import fs from 'node:fs/promises'
import { availableParallelism } from 'node:os'
import path from 'node:path'
import type { ManifestItem } from '@shared/schemas/packs'
import type { AppContext } from '../core/context'
import { nowIso } from '../core/time'
import type { JobHandler } from '../jobs/job-runner'
import type { NewPackBuildItem } from '../../db/schema-packs'
import { renderItem, RenderStopped, type RenderRequest } from '../render/render'
import { createRenderPool, type RenderedFile } from '../render/render-pool'
import { round2 } from '../render/settings'
import { describeItemFailure, expectedFrames, renderRequest, type BuildSnapshot, type ItemSpec } from './item-spec'
import { manifestCsv, PackZip } from './pack-zip'
import * as repo from './packs.repository'

/** Runs renders: in this thread, or in a pool of worker threads (render-pool.ts). */
export interface RenderExecutor {
  /** Renders that may run at once. */
  readonly parallel: number
  /** Worker threads it renders in (0: this thread). */
  readonly workers: number
  /** Renders one item to a temp file (the zip hashes it as it reads it). */
  render(req: RenderRequest, outPath: string, signal: { stopped: boolean }): Promise<RenderedFile>
  close(): Promise<void>
}

export const inProcessExecutor = (): RenderExecutor => ({
  parallel: 1,
  workers: 0,
  // Temp renders are read into the zip and deleted: only the zip is fsynced.
  render: (req, outPath, signal) => renderItem({ ...req, shouldStop: () => signal.stopped || !!req.shouldStop?.() }, outPath, { durable: false }),
  close: async () => undefined,
})

/** Renders in worker threads (render-pool.ts): a pool per build, closed when the build ends. */
export const workerExecutor = (workers?: number): RenderExecutor => {
  const pool = createRenderPool(workers)
  return { parallel: pool.size, workers: pool.size, render: (req, out, signal) => pool.render(req, out, signal), close: () => pool.close() }
}

export interface BuildPaths {
  dirRel: string
  finalRel: string
  tmpZip: string
  workDir: string
}

export function buildPaths(ctx: AppContext, build: { id: number; pack_id: number; version: number }): BuildPaths {
  const dirRel = path.join('builds', `pack-${build.pack_id}`)
  return {
    dirRel,
    finalRel: path.join(dirRel, `build-${build.id}-v${build.version}.zip`),
    tmpZip: ctx.storage.abs(path.join(dirRel, `.build-${build.id}.zip.part`)),
    workDir: ctx.storage.abs(path.join('builds', 'tmp', `build-${build.id}`)),
  }
}

class BuildStopped extends Error {
  constructor() {
    super('build stopped with the server; it resumes at the next start')
  }
}

export function licenceFile(snap: BuildSnapshot, version: number): string {
  return `${snap.pack.name}, version ${version}\n\n${snap.pack.licenceText.trim()}\n`
}

/** Below this much audio (samples over all channels, about a minute of 48 kHz stereo) starting worker threads costs more than it saves. */
export const WORKER_THRESHOLD_SAMPLES = 6_000_000

/**
 * Where a build renders. On four cores or more a large build renders in two worker threads
 * while this thread writes the zip. On fewer cores it renders in this thread, leaving a core
 * to the API and the analysis pool: measured on two cores (bench/results/pack.md), two
 * workers built about 35 % faster but took about 150 MB more memory, and one worker was no
 * faster than none.
 */
export function executorFor(snap: BuildSnapshot, cores = availableParallelism()): RenderExecutor {
  const samples = snap.items.reduce((n, s) => n + expectedFrames(s) * (s.channels ?? 2), 0)
  return cores >= 4 && samples >= WORKER_THRESHOLD_SAMPLES ? workerExecutor(2) : inProcessExecutor()
}

export function buildPackJob(ctx: AppContext, makeExecutor: (snap: BuildSnapshot) => RenderExecutor = executorFor): JobHandler {
  return {
    concurrency: 1,
    run: (job, progress) => runBuild(ctx, job.ref_id, progress, makeExecutor),
    async failed(job, message) {
      const b = await repo.findBuild(ctx.db, job.ref_id)
      if (!b) return
      if (b.status !== 'failed' && b.status !== 'done') await repo.updateBuild(ctx.db, b.id, { status: 'failed', error: message, finished_at: nowIso() })
      // Given up after interrupted attempts: sweep what the last one left.
      const paths = buildPaths(ctx, b)
      await fs.rm(paths.tmpZip, { force: true })
      await fs.rm(paths.workDir, { recursive: true, force: true })
    },
  }
}

export async function runBuild(ctx: AppContext, buildId: number, jobProgress: (p: number) => Promise<void>, makeExecutor: (snap: BuildSnapshot) => RenderExecutor): Promise<void> {
  const build = await repo.findBuild(ctx.db, buildId)
  if (!build || build.status === 'done') return // deleted meanwhile, or finished before a crash
  const snap = JSON.parse(build.snapshot_json) as BuildSnapshot
  const paths = buildPaths(ctx, build)
  await fs.mkdir(ctx.storage.abs(paths.dirRel), { recursive: true })
  // Whatever an interrupted attempt left: a partial zip, temp renders.
  await fs.rm(paths.tmpZip, { force: true })
  await fs.rm(paths.workDir, { recursive: true, force: true })
  await fs.mkdir(paths.workDir, { recursive: true })
  await repo.deleteBuildItems(ctx.db, buildId)
  await repo.updateBuild(ctx.db, buildId, {
    status: 'running',
    progress: 0,
    started_at: nowIso(),
    finished_at: null,
    error: null,
    failed_item_position: null,
    failed_item_id: null,
    failed_item_name: null,
  })

  const createdAt = new Date(build.created_at)
  const totalFrames = snap.items.reduce((n, s) => n + expectedFrames(s), 0)
  const framesOf = new Float64Array(snap.items.length)
  let lastReported = 0
  let lastWrite = 0
  const report = () => {
    let done = 0
    for (const f of framesOf) done += f
    const p = Math.min(0.99, done / totalFrames)
    const t = Date.now()
    if (p - lastReported < 0.01 && t - lastWrite < 1000) return
    lastReported = p
    lastWrite = t
    void repo.updateBuild(ctx.db, buildId, { progress: p }).catch(() => undefined)
    void jobProgress(p).catch(() => undefined)
  }

  const signal = { stopped: false }
  const stopWatch = setInterval(() => {
    if (ctx.jobs.isStopped) signal.stopped = true
  }, 50)
  const executor = makeExecutor(snap)
  const zip = PackZip.create(paths.tmpZip, ctx.storage.abs(paths.finalRel), createdAt)
  const inflight: Promise<RenderedFile>[] = []
  let next = 0
  const startNext = () => {
    if (next >= snap.items.length) return
    const k = next++
    const spec = snap.items[k]
    const req = renderRequest(spec, ctx.storage.abs(spec.audioPath), `SF-P${snap.pack.id}-V${build.version}-${spec.position}`, createdAt)
    req.onFrames = (f) => {
      framesOf[k] = f
      report()
    }
    const p = executor.render(req, path.join(paths.workDir, spec.fileName), signal)
    p.catch(() => undefined) // awaited in order below; this only keeps an early failure from being unhandled
    inflight.push(p)
  }

  let current: ItemSpec | null = null
  try {
    const manifest: ManifestItem[] = []
    const rows: NewPackBuildItem[] = []
    for (let i = 0; i < executor.parallel; i++) startNext()
    for (let k = 0; k < snap.items.length; k++) {
      const spec = snap.items[k]
      current = spec
      const r = await inflight[k]
      if (signal.stopped) throw new BuildStopped()
      startNext()
      const entry = await zip.addFile(spec.fileName, r.path)
      await fs.rm(r.path, { force: true })
      const item: ManifestItem = {
        file: spec.fileName,
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
        licence: snap.pack.licenceText,
        sha256: entry.sha256,
      }
      manifest.push(item)
      rows.push({
        build_id: buildId,
        position: spec.position,
        item_id: spec.itemId,
        take_id: spec.takeId,
        file_name: spec.fileName,
        size_bytes: entry.bytes,
        sha256: entry.sha256,
        duration_seconds: r.durationSeconds,
        sample_rate: r.sampleRate,
        bit_depth: r.bitDepth,
        channels: r.channels,
        gain_db: r.gainDb,
        integrated_lufs: r.levels.integratedLufs,
        true_peak_dbtp: r.levels.truePeakDbtp,
        loudness_range_lu: r.levels.loudnessRangeLu,
        under_target_db: r.underTargetDb,
      })
    }
    current = null
    if (signal.stopped) throw new BuildStopped()
    const json = {
      pack: {
        id: snap.pack.id,
        name: snap.pack.name,
        description: snap.pack.description,
        licence: snap.pack.licenceText,
        namingTemplate: snap.pack.namingTemplate,
        settings: snap.pack.settings,
      },
      build: { id: buildId, version: build.version, createdAt: build.created_at, itemCount: manifest.length, generator: 'Strayfield' },
      items: manifest,
    }
    await zip.addBuffer('manifest.json', Buffer.from(JSON.stringify(json, null, 2) + '\n'))
    await zip.addBuffer('manifest.csv', Buffer.from(manifestCsv(manifest)))
    await zip.addBuffer('LICENSE.txt', Buffer.from(licenceFile(snap, build.version)))
    const done = await zip.finish()
    await ctx.db.transaction().execute(async (trx) => {
      await repo.insertBuildItems(trx, rows)
      await repo.updateBuild(trx, buildId, {
        status: 'done',
        progress: 1,
        zip_path: paths.finalRel,
        size_bytes: done.bytes,
        sha256: done.sha256,
        finished_at: nowIso(),
      })
    })
  } catch (err) {
    signal.stopped = true
    await Promise.allSettled(inflight)
    await zip.abort()
    await fs.rm(paths.workDir, { recursive: true, force: true })
    if (ctx.jobs.isStopped || err instanceof BuildStopped || err instanceof RenderStopped) throw err // stays 'running'; queued again at start
    const message = current ? describeItemFailure(current, err) : `writing the zip failed: ${(err as Error).message}`
    await repo.updateBuild(ctx.db, buildId, {
      status: 'failed',
      error: message,
      finished_at: nowIso(),
      failed_item_position: current?.position ?? null,
      failed_item_id: current?.itemId ?? null,
      failed_item_name: current?.outputName ?? null,
    })
    throw new Error(message, { cause: err })
  } finally {
    clearInterval(stopWatch)
    await executor.close()
  }
  await fs.rm(paths.workDir, { recursive: true, force: true })
}
