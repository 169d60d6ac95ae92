// The durable 'build-pack' job: freezes nothing itself (the build's snapshot was
// taken when it was asked for), starts a build process for it (build-process.ts,
// which renders and zips: build-writer.ts), relays its progress into the build's
// row, and records the result or the failure.
//
// A failure names the item and why, and leaves neither a zip nor a temp render
// behind. A job interrupted by a stop or a crash is queued again by the job
// runner at the next start and re-runs from scratch (leftovers of the
// interrupted attempt are swept first).
import { fork, type ChildProcess } from 'node:child_process'
import fs from 'node:fs/promises'
import { availableParallelism } from 'node:os'
import path from 'node:path'
import type { AppContext } from '../../core/context'
import { reviveError } from '../../core/thread-errors'
import { nowIso } from '../../core/time'
import { workerModule } from '../../core/workers'
import type { JobHandler } from '../../jobs/job-runner'
import type { NewPackBuildItem } from '../../../db/schema-packs'
import { renderWorkerEntry } from '../../render/render-pool'
import { BuildStopped, type BuildOrder, type BuildOutput } from './build-writer'
import type { FromBuildProcess, ToBuildProcess } from './build-process'
import { describeItemFailure, expectedFrames, renderRequest, type BuildSnapshot } from '../curation/item-spec'
import * as repo from '../packs.repository'

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

/** Below this much audio (samples over all channels, about a minute of 48 kHz stereo) starting worker threads costs more than it saves. */
export const WORKER_THRESHOLD_SAMPLES = 6_000_000

/**
 * Render threads of a build: for a large build two worker threads (one per core, at most two)
 * while the build process's own thread writes the zip; a small one renders in that thread.
 * Measured on two cores (bench/results/pack.md): two render threads beside the zip were the
 * fastest, and each costs some 20–40 MB.
 */
export function renderThreadsFor(snap: BuildSnapshot, cores = availableParallelism()): number {
  const samples = snap.items.reduce((n, s) => n + expectedFrames(s) * (s.channels ?? 2), 0)
  return samples >= WORKER_THRESHOLD_SAMPLES ? Math.min(2, cores) : 0
}

export interface BuildOptions {
  /** Forces the number of render threads (the benchmark compares them). */
  renderThreads?: number
}

/** What the build process reported about itself. */
export interface BuildReport {
  renderThreads: number
  /** Peak resident memory of the build process, all its threads (getrusage). */
  maxRssKb: number
}

export function buildPackJob(ctx: AppContext): JobHandler {
  return {
    concurrency: 1,
    run: async (job, progress) => void (await runBuild(ctx, job.ref_id, progress)),
    async failed(job, message) {
      const b = await repo.findBuild(ctx.db, job.ref_id)
      if (!b) return
      if (b.status !== 'failed' && b.status !== 'done')
        await repo.updateBuild(ctx.db, b.id, { status: 'failed', error: message, finished_at: nowIso() })
      // Given up after interrupted attempts: sweep what the last one left.
      const paths = buildPaths(ctx, b)
      await fs.rm(paths.tmpZip, { force: true })
      await fs.rm(paths.workDir, { recursive: true, force: true })
    },
  }
}

class BuildProcessDied extends Error {
  constructor(how: string) {
    super(`the build process stopped before it finished (${how})`)
  }
}

/**
 * Starts the build process (plain JavaScript, without the options the server itself was started
 * with). Its arguments only name the build and its zip, so `ps` shows which build a process runs.
 */
function startBuildProcess(order: BuildOrder): ChildProcess {
  const ext = import.meta.url.endsWith('.ts') ? '.ts' : '.js'
  const entry = workerModule(new URL(`./build-process${ext}`, import.meta.url))
  return fork(entry, ['--build', String(order.buildId), order.tmpZip], {
    execArgv: [],
    serialization: 'advanced',
    stdio: ['ignore', 'inherit', 'inherit', 'ipc'],
  })
}

/** Sends the order and resolves with the process's answer; a process that dies without one rejects. */
function runProcess(
  order: BuildOrder,
  onFrames: (k: number, frames: number) => void,
  isStopped: () => boolean,
): Promise<Exclude<FromBuildProcess, { type: 'frames' }>> {
  const child = startBuildProcess(order)
  return new Promise((resolve, reject) => {
    let answer: Exclude<FromBuildProcess, { type: 'frames' }> | null = null
    let stopSent = false
    const stopWatch = setInterval(() => {
      if (stopSent || !isStopped() || !child.connected) return
      stopSent = true
      child.send({ type: 'stop' } satisfies ToBuildProcess)
    }, 50)
    child.on('message', (m: FromBuildProcess) => {
      if (m.type === 'frames') onFrames(m.k, m.frames)
      else answer = m
    })
    child.once('error', (err) => {
      clearInterval(stopWatch)
      reject(err)
    })
    child.once('exit', (code, signal) => {
      clearInterval(stopWatch)
      if (answer) resolve(answer)
      else reject(new BuildProcessDied(signal ?? `exit code ${code}`))
    })
    child.send({ type: 'order', order } satisfies ToBuildProcess)
  })
}

export async function runBuild(
  ctx: AppContext,
  buildId: number,
  jobProgress: (p: number) => Promise<void>,
  options: BuildOptions = {},
): Promise<BuildReport | null> {
  const build = await repo.findBuild(ctx.db, buildId)
  if (!build || build.status === 'done') return null // deleted meanwhile, or finished before a crash
  const snap = JSON.parse(build.snapshot_json) as BuildSnapshot
  const paths = buildPaths(ctx, build)
  // Whatever an interrupted attempt left: a partial zip, temp renders (the build process sweeps them too).
  await fs.rm(paths.tmpZip, { force: true })
  await fs.rm(paths.workDir, { recursive: true, force: true })
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
  const onFrames = (k: number, frames: number) => {
    framesOf[k] = frames
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

  const renderThreads = options.renderThreads ?? renderThreadsFor(snap)
  const order: BuildOrder = {
    buildId,
    version: build.version,
    createdAt: build.created_at,
    snap,
    requests: snap.items.map((spec) =>
      renderRequest(
        spec,
        ctx.storage.abs(spec.audioPath),
        `SF-P${snap.pack.id}-V${build.version}-${spec.position}`,
        createdAt,
      ),
    ),
    tmpZip: paths.tmpZip,
    finalZip: ctx.storage.abs(paths.finalRel),
    workDir: paths.workDir,
    renderThreads,
    renderWorker: renderThreads > 0 ? workerModule(renderWorkerEntry()).href : undefined,
  }
  let answer: Awaited<ReturnType<typeof runProcess>>
  try {
    answer = await runProcess(order, onFrames, () => ctx.jobs.isStopped)
  } catch (err) {
    // The process died without an answer (killed, out of memory): clean up after it.
    await fs.rm(paths.tmpZip, { force: true })
    await fs.rm(paths.workDir, { recursive: true, force: true })
    if (ctx.jobs.isStopped) throw new BuildStopped() // stays 'running'; queued again at start
    return fail(ctx, buildId, null, snap, err)
  }
  if (answer.type === 'stopped') throw new BuildStopped()
  if (answer.type === 'failed') {
    if (ctx.jobs.isStopped) throw new BuildStopped()
    return fail(ctx, buildId, answer.position, snap, reviveError(answer.error))
  }
  await record(ctx, buildId, snap, paths, answer.output)
  return { renderThreads, maxRssKb: answer.maxRssKb }
}

async function record(
  ctx: AppContext,
  buildId: number,
  snap: BuildSnapshot,
  paths: BuildPaths,
  output: BuildOutput,
): Promise<void> {
  const rows: NewPackBuildItem[] = output.items.map((it, k) => {
    const spec = snap.items[k]
    return {
      build_id: buildId,
      position: spec.position,
      item_id: spec.itemId,
      take_id: spec.takeId,
      file_name: spec.fileName,
      size_bytes: it.bytes,
      sha256: it.manifest.sha256,
      duration_seconds: it.manifest.durationSeconds,
      sample_rate: it.manifest.sampleRate,
      bit_depth: it.manifest.bitDepth,
      channels: it.manifest.channels,
      gain_db: it.gainDb,
      integrated_lufs: it.integratedLufs,
      true_peak_dbtp: it.truePeakDbtp,
      loudness_range_lu: it.loudnessRangeLu,
      under_target_db: it.manifest.underTargetDb,
    }
  })
  await ctx.db.transaction().execute(async (trx) => {
    await repo.insertBuildItems(trx, rows)
    await repo.updateBuild(trx, buildId, {
      status: 'done',
      progress: 1,
      zip_path: paths.finalRel,
      size_bytes: output.zip.bytes,
      sha256: output.zip.sha256,
      finished_at: nowIso(),
    })
  })
}

/** Marks the build failed (naming the item when one failed) and fails the job with the same words. */
async function fail(
  ctx: AppContext,
  buildId: number,
  position: number | null,
  snap: BuildSnapshot,
  err: unknown,
): Promise<never> {
  const spec = position === null ? null : (snap.items.find((s) => s.position === position) ?? null)
  const message = spec
    ? describeItemFailure(spec, err)
    : err instanceof BuildProcessDied
      ? err.message
      : `writing the zip failed: ${(err as Error).message}`
  await repo.updateBuild(ctx.db, buildId, {
    status: 'failed',
    error: message,
    finished_at: nowIso(),
    failed_item_position: spec?.position ?? null,
    failed_item_id: spec?.itemId ?? null,
    failed_item_name: spec?.outputName ?? null,
  })
  throw new Error(message, { cause: err })
}
