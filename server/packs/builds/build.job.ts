// The durable 'build-pack' job: freezes nothing itself (the build's snapshot was
// taken when it was asked for). `prepare` marks the build running and hands out
// the snapshot; `perform` (in this process or a worker process: storage only)
// runs the 'pack-build' task on the audio-task pool (server/work/: the zip is
// written on one worker thread while the items render on others); progress goes
// into the build's row (the one place the API reads it); `record` stores the
// items or the failure.
//
// A failure names the item and why, and leaves neither a zip nor a temp render
// behind. A job stopped through its AbortSignal (the server stopping) or cut by
// a crash is queued again by the job runner at the next start and re-runs from
// scratch (leftovers of the interrupted attempt are swept first).
import fs from 'node:fs/promises'
import { availableParallelism } from 'node:os'
import path from 'node:path'
import type { AppContext } from '../../core/context'
import type { Storage } from '../../core/storage'
import { errorInfo, reviveError } from '../../core/thread-errors'
import { nowIso } from '../../core/time'
import type { JobWork, WorkEnv } from '../../jobs/queue'
import type { NewPackBuildItem } from '../../../db/schema-packs'
import { runAudioTask } from '../../work/audio-tasks'
import type { BuildAnswer, BuildOrder, BuildOutput } from './build-writer'
import { describeItemFailure, expectedFrames, renderRequest, type BuildSnapshot } from '../curation/item-spec'
import * as repo from '../packs.repository'

export interface BuildPaths {
  dirRel: string
  finalRel: string
  tmpZip: string
  workDir: string
}

export function buildPaths(storage: Storage, build: { id: number; pack_id: number; version: number }): BuildPaths {
  const dirRel = path.join('builds', `pack-${build.pack_id}`)
  return {
    dirRel,
    finalRel: path.join(dirRel, `build-${build.id}-v${build.version}.zip`),
    tmpZip: storage.abs(path.join(dirRel, `.build-${build.id}.zip.part`)),
    workDir: storage.abs(path.join('builds', 'tmp', `build-${build.id}`)),
  }
}

/** Below this much audio (samples over all channels, about a minute of 48 kHz stereo) one render at a time is enough. */
export const WORKER_THRESHOLD_SAMPLES = 6_000_000

/**
 * Items a build renders at once, on the pool's other threads while one writes the zip: two for a
 * large build on two cores or more, one for a small one. Measured on two cores
 * (bench/results/pack.md): two renders beside the zip were the fastest, and each costs some 20–40 MB.
 */
export function renderThreadsFor(snap: BuildSnapshot, cores = availableParallelism()): number {
  const samples = snap.items.reduce((n, s) => n + expectedFrames(s) * (s.channels ?? 2), 0)
  return samples >= WORKER_THRESHOLD_SAMPLES ? Math.min(2, cores) : 1
}

export interface BuildOptions {
  /** Forces the number of items rendered at once (the benchmark compares them). */
  renderThreads?: number
}

/** How the build ran. */
export interface BuildReport {
  renderThreads: number
  /** Peak resident memory of this process so far, all its threads (getrusage). */
  maxRssKb: number
}

/** What a build's work needs: plain data, paths relative to the storage. */
export interface BuildJobOrder {
  buildId: number
  packId: number
  version: number
  createdAt: string
  snap: BuildSnapshot
  renderThreads: number
}

async function sweep(paths: BuildPaths): Promise<void> {
  await fs.rm(paths.tmpZip, { force: true })
  await fs.rm(paths.workDir, { recursive: true, force: true })
}

/** The work of a build, wherever it runs: the zip into storage, its items as the answer. */
export async function performBuild(o: BuildJobOrder, env: WorkEnv): Promise<BuildAnswer> {
  const paths = buildPaths(env.storage, { id: o.buildId, pack_id: o.packId, version: o.version })
  // Whatever an interrupted attempt left: a partial zip, temp renders.
  await sweep(paths)
  const createdAt = new Date(o.createdAt)
  // With S3 the renders read takes by path: fetch each into the working copy first. One that cannot
  // be fetched keeps its plain path, so the render fails naming the item it belongs to.
  const audioFiles = new Map<string, string>()
  for (const { audioPath: key } of o.snap.items)
    if (!audioFiles.has(key)) audioFiles.set(key, await env.storage.local(key).catch(() => env.storage.abs(key)))
  const order: BuildOrder = {
    buildId: o.buildId,
    version: o.version,
    createdAt: o.createdAt,
    snap: o.snap,
    requests: o.snap.items.map((spec) =>
      renderRequest(
        spec,
        audioFiles.get(spec.audioPath)!,
        `SF-P${o.snap.pack.id}-V${o.version}-${spec.position}`,
        createdAt,
      ),
    ),
    tmpZip: paths.tmpZip,
    finalZip: env.storage.abs(paths.finalRel),
    workDir: paths.workDir,
    renderThreads: o.renderThreads,
  }
  try {
    const answer = await runAudioTask('pack-build', order, { signal: env.signal, onProgress: env.progress })
    // With S3, the zip is in the bucket before the build can be recorded as done (where this ran).
    if (answer.ok) await env.storage.persist(paths.finalRel)
    return answer
  } catch (err) {
    // A thread stopped mid-write (the signal, a crash) cannot clean up after itself.
    await sweep(paths)
    if (env.signal.aborted) throw err // stays running; queued again
    return { ok: false, position: null, error: errorInfo(err) }
  }
}

export function buildPackJob(ctx: AppContext, options: BuildOptions = {}): JobWork<BuildJobOrder, BuildAnswer> {
  return {
    concurrency: 1,
    async prepare(job) {
      const build = await repo.findBuild(ctx.db, job.ref_id)
      if (!build || build.status === 'done') return null // deleted meanwhile, or finished before a crash
      const snap = JSON.parse(build.snapshot_json) as BuildSnapshot
      await repo.deleteBuildItems(ctx.db, build.id)
      await repo.updateBuild(ctx.db, build.id, {
        status: 'running',
        progress: 0,
        started_at: nowIso(),
        finished_at: null,
        error: null,
        failed_item_position: null,
        failed_item_id: null,
        failed_item_name: null,
      })
      return {
        buildId: build.id,
        packId: build.pack_id,
        version: build.version,
        createdAt: build.created_at,
        snap,
        renderThreads: options.renderThreads ?? renderThreadsFor(snap),
      }
    },
    perform: performBuild,
    // The task reports at most every 1 % or second; a lost write is made good by the next one.
    progress: (_job, o, p) => void repo.updateBuild(ctx.db, o.buildId, { progress: p }).catch(() => undefined),
    async record(_job, o, answer) {
      if (!answer.ok) return fail(ctx, o.buildId, answer.position, o.snap, reviveError(answer.error))
      const paths = buildPaths(ctx.storage, { id: o.buildId, pack_id: o.packId, version: o.version })
      await record(ctx, o.buildId, o.snap, paths, answer.output)
    },
    async failed(job, message) {
      const b = await repo.findBuild(ctx.db, job.ref_id)
      if (!b) return
      if (b.status !== 'failed' && b.status !== 'done')
        await repo.updateBuild(ctx.db, b.id, { status: 'failed', error: message, finished_at: nowIso() })
      // Given up after interrupted attempts: sweep what the last one left.
      await sweep(buildPaths(ctx.storage, b))
    },
  }
}

/** Runs one build here, start to end (the benchmark). Null when there was nothing to build. */
export async function runBuild(
  ctx: AppContext,
  buildId: number,
  signal: AbortSignal,
  options: BuildOptions = {},
): Promise<BuildReport | null> {
  const work = buildPackJob(ctx, options)
  const job = { id: 0, kind: 'build-pack', ref_id: buildId } as Parameters<typeof work.prepare>[0]
  const order = await work.prepare(job)
  if (!order) return null
  const answer = await performBuild(order, {
    storage: ctx.storage,
    signal,
    progress: (p) => work.progress(job, order, p),
  })
  await work.record(job, order, answer)
  return { renderThreads: order.renderThreads, maxRssKb: process.resourceUsage().maxRSS }
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
    // Recorded once: an answer delivered twice (a queue's retry after the result was kept) changes nothing.
    if ((await repo.findBuild(trx, buildId))?.status === 'done') return
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
  const message = spec ? describeItemFailure(spec, err) : `writing the zip failed: ${(err as Error).message}`
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
