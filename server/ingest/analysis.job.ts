import type { Analysis, FileMetadata, WavFormat } from '@shared/schemas/analysis'
import type { TakeGlyph } from '@shared/schemas/takes'
import type { AppContext } from '../core/context'
import { publicErrorText } from '../core/errors'
import type { JobWork, WorkEnv } from '../jobs/queue'
import { runAudioTask } from '../work/audio-tasks'
import { readPeaks } from '../audio/peaks'
import { addEvent, findTake, updateTake } from '../takes/takes.service'
import { prefillFromMetadata } from './prefill'
import { failureText } from './remeasure'
import { recordCharacter } from '../similar/similar.service'
import { featuresFromJson, featuresToJson, type FeaturesJson } from '../audio/character'

const THUMB_POINTS = 48

/** A tiny 0..1 envelope for lists and the capture board, from the stored overview. */
async function thumbnail(peaksPath: string): Promise<number[]> {
  const peaks = await readPeaks(peaksPath, { maxPoints: THUMB_POINTS * 4 })
  const pairs = peaks.data[0].length / 2
  const out: number[] = []
  for (let i = 0; i < THUMB_POINTS; i++) {
    const from = Math.floor((i * pairs) / THUMB_POINTS)
    const to = Math.max(from + 1, Math.floor(((i + 1) * pairs) / THUMB_POINTS))
    let m = 0
    for (const ch of peaks.data)
      for (let j = from; j < to && j < pairs; j++) m = Math.max(m, Math.abs(ch[2 * j]), Math.abs(ch[2 * j + 1]))
    out.push(Math.round(Math.min(1, m) * 1000) / 1000)
  }
  return out
}

const fmt = (v: number | null, unit: string) => (v === null ? `— ${unit}` : `${v.toFixed(1)} ${unit}`)

/** The glyph is stored inside the analysis's JSON (key `glyph`; the mapper lifts it onto the take). */
export function measuredColumns(format: WavFormat, analysis: Analysis, glyph?: TakeGlyph) {
  return {
    format_json: JSON.stringify(format),
    analysis_json: JSON.stringify(glyph ? { ...analysis, glyph } : analysis),
    duration_seconds: format.durationSeconds,
    sample_rate: format.sampleRate,
    channels: format.channels,
    bits_per_sample: format.bitsPerSample,
    integrated_lufs: analysis.loudness.integratedLufs,
    true_peak_dbtp: analysis.levels.truePeakDbtp,
    loudness_range_lu: analysis.loudness.loudnessRangeLu,
    sample_peak_dbfs: analysis.levels.samplePeakDbfs,
    noise_floor_dbfs: analysis.noiseFloorDbfs,
    hum_hz: analysis.spectrum.mainsHum.hz,
    bext_description: analysis.metadata.bext?.description ?? '',
  }
}

/**
 * Title, description and notes from what the recorder wrote into the file (read in the worker,
 * never on the upload's request thread), for the fields nobody has edited since the upload.
 */
function labelsFromFile(
  take: { filename: string; title: string; description: string; notes: string },
  meta: FileMetadata,
) {
  const fromFile = prefillFromMetadata(meta, take.filename)
  const atUpload = prefillFromMetadata(null, take.filename)
  return {
    ...(take.title === atUpload.title ? { title: fromFile.title } : {}),
    ...(take.description === '' ? { description: fromFile.description } : {}),
    ...(take.notes === '' ? { notes: fromFile.notes } : {}),
  }
}

/**
 * A task that sends no progress for this long (a reader stuck on hostile metadata, say) is stopped
 * and the take fails with that reason.
 */
export const ANALYSIS_SILENCE_MS = 120_000

export interface AnalysisOrder {
  takeId: number
  /** Relative to the storage root. */
  audioPath: string
}

export interface AnalysisResult {
  format: WavFormat
  analysis: Analysis
  glyph: TakeGlyph
  thumb: number[]
  /** Sounds-like features as plain arrays (the result may cross a process boundary as JSON). */
  features?: FeaturesJson
}

/** The work of measuring a take, wherever it runs: the audio-task pool, the peaks file in storage, the thumbnail. */
export async function measureTake(order: AnalysisOrder, env: WorkEnv): Promise<AnalysisResult> {
  const peaksPath = env.storage.peaksPath(order.takeId)
  let last = 0
  const { format, analysis, glyph, features } = await runAudioTask(
    'analyze',
    // With S3 the audio is fetched into the working copy first (heavy work reads files by path).
    { path: await env.storage.local(order.audioPath), peaksPath },
    {
      signal: env.signal,
      silenceLimitMs: ANALYSIS_SILENCE_MS,
      onProgress: (p) => {
        // A write per 2 % is plenty for a live progress bar.
        if (p - last < 0.02) return
        last = p
        env.progress(p)
      },
    },
  )
  const thumb = await thumbnail(peaksPath)
  await env.storage.persist(env.storage.peaksRelative(order.takeId))
  return { format, analysis, glyph, thumb, features: features && featuresToJson(features) }
}

/**
 * Measures one take and stores every number with it. Status and progress go to the take's row only
 * (the one place the API reads them). `concurrency`: takes measured at once.
 */
export function analysisJob(ctx: AppContext, concurrency: number): JobWork<AnalysisOrder, AnalysisResult> {
  return {
    concurrency,
    async prepare(job) {
      const take = await findTake(ctx.db, job.ref_id)
      if (!take) return null // deleted meanwhile
      await updateTake(ctx.db, take.id, { status: 'analyzing', progress: 0, error: null })
      return { takeId: take.id, audioPath: take.audio_path }
    },
    perform: measureTake,
    progress(_job, order, p) {
      void updateTake(ctx.db, order.takeId, { progress: p }).catch(() => undefined)
    },
    async record(_job, order, { format, analysis, glyph, thumb, features }) {
      await ctx.db.transaction().execute(async (trx) => {
        const now = await findTake(trx, order.takeId)
        if (!now) return
        const labels = labelsFromFile(now, analysis.metadata)
        await updateTake(trx, order.takeId, {
          ...measuredColumns(format, analysis, glyph),
          ...labels,
          thumb_json: JSON.stringify(thumb),
          status: 'ready',
          progress: 1,
        })
      })
      await recordCharacter(ctx, order.takeId, analysis.character, features && featuresFromJson(features))
      await addEvent(
        ctx.db,
        order.takeId,
        null,
        'measured',
        `Measured: ${fmt(analysis.loudness.integratedLufs, 'LUFS')}, true peak ${fmt(analysis.levels.truePeakDbtp, 'dBTP')}`,
      )
    },
    async failed(job, message, err) {
      const text = failureText(publicErrorText(message), err) // no server paths where members read it
      await updateTake(ctx.db, job.ref_id, { status: 'failed', error: text }).catch(() => undefined)
      await addEvent(ctx.db, job.ref_id, null, 'failed', `Could not be measured: ${text}`).catch(() => undefined)
    },
  }
}
