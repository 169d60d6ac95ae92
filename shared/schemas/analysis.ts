// The one shape of a measured file: what the engine returns, what the API
// serves inside a take, what the client draws and what the CLI prints.
// Field names are fixed by the product's public API; keep them.
import { z } from 'zod'
import { Character } from './character'

/** A level in dB, or null where it is undefined (silence, below a gate). Never ±Infinity or NaN. */
const Db = z.number().finite().nullable()

export const WavFormat = z.object({
  container: z.enum(['RIFF', 'RF64', 'BW64']),
  encoding: z.enum(['pcm', 'float']),
  bitsPerSample: z.number().int(),
  validBitsPerSample: z.number().int(),
  sampleRate: z.number().int(),
  channels: z.number().int(),
  /** WAVE_FORMAT_EXTENSIBLE speaker mask; 0 when the file has none. */
  channelMask: z.number().int(),
  frames: z.number().int(),
  durationSeconds: z.number(),
  /** true when the data size was 0 or 0xFFFFFFFF (recorder stopped mid-take) and was taken from the file length. */
  recovered: z.boolean(),
})
export type WavFormat = z.infer<typeof WavFormat>

export const ChannelLevels = z.object({
  samplePeakDbfs: Db,
  truePeakDbtp: Db,
  rmsDbfs: Db,
  /** Mean sample value as a fraction of full scale (−1..1). */
  dcOffset: z.number(),
  crestFactorDb: Db,
  /**
   * Clipped: samples in flat runs (two or more in a row) at the format's limit, the largest or
   * smallest PCM code, or exactly ±1.0 in a float file.
   */
  clippedSamples: z.number().int(),
  // Added in measurement round two; absent from analyses stored before it.
  /** The longest of those flat runs, in samples. */
  longestClipSamples: z.number().int().optional(),
  /** High-accuracy true peak (64-tap windowed sinc), the figure ceilings are held to. */
  preciseTruePeakDbtp: Db.optional(),
  /** Float files only: samples beyond full scale (|x| > 1), which a float file can hold unclipped. */
  overFullScaleSamples: z.number().int().optional(),
  /** NaN and infinite samples, left out of every measurement. */
  invalidSamples: z.number().int().optional(),
  /** This channel's noise floor (see NoiseFloor); null when it never falls quiet or is silent. */
  noiseFloorDbfs: Db.optional(),
  /** Silent or dead: no 50 ms stretch of it (DC removed) reaches −100 dBFS. */
  silent: z.boolean().optional(),
})
export type ChannelLevels = z.infer<typeof ChannelLevels>

export const InvalidSamples = z.object({
  /** NaN and infinite samples over all channels. */
  count: z.number().int(),
  /** Times (seconds) of the first few of them, distinct to 0.1 s. */
  times: z.array(z.number()),
})
export type InvalidSamples = z.infer<typeof InvalidSamples>

export const Levels = z.object({
  samplePeakDbfs: Db,
  /** True peak (BS.1770): ITU-R BS.1770-4 Annex 2, 4× oversampling; within about −0.5/+0.25 dB of the real peak. */
  truePeakDbtp: Db,
  rmsDbfs: Db,
  channels: z.array(ChannelLevels),
  /** High-accuracy true peak over all channels; absent from analyses stored before it. */
  preciseTruePeakDbtp: Db.optional(),
  invalidSamples: InvalidSamples.optional(),
})
export type Levels = z.infer<typeof Levels>

export const Loudness = z.object({
  integratedLufs: Db,
  loudnessRangeLu: z.number().finite().nullable(),
  /** Highest momentary (400 ms) loudness over windows at every 5 ms (EBU Tech 3341 cases 10 and 13). */
  maxMomentaryLufs: Db,
  /** Highest short-term (3 s) loudness over windows at every 5 ms. */
  maxShortTermLufs: Db,
  /**
   * Short-sound loudness: K-weighted energy over the whole sound, −0.691 + 10·log10(mean square), for
   * sounds shorter than one 400 ms block (which have no integrated loudness); null otherwise and in
   * analyses stored before it existed. Not integrated loudness: no gating, no blocks.
   */
  shortSoundLufs: Db.optional(),
})
export type Loudness = z.infer<typeof Loudness>

export const TonalPeak = z.object({ hz: z.number(), db: z.number() })
export type TonalPeak = z.infer<typeof TonalPeak>

export const HumHarmonic = z.object({
  /** 1 = the fundamental. */
  n: z.number().int(),
  hz: z.number(),
  /** Level of the harmonic's band over the bands beside it, dB. */
  aboveNeighboursDb: z.number().finite().nullable(),
  standsOut: z.boolean(),
})
export type HumHarmonic = z.infer<typeof HumHarmonic>

export const TimeSpan = z.object({ startSeconds: z.number(), endSeconds: z.number() })
export type TimeSpan = z.infer<typeof TimeSpan>

export const MainsHum = z.object({
  /** The verdict, and the library's hum filter: 50 or 60 Hz mains hum, or null. */
  hz: z.union([z.literal(50), z.literal(60)]).nullable(),
  /** Energy at the fundamental and harmonics against the neighbouring bands, in dB, for the winning (or best) candidate. */
  ratioDb: z.number().finite().nullable(),
  // Added in measurement round two; absent from analyses stored before it.
  /** The fundamental as measured (e.g. 49.96), when hum was found. */
  measuredHz: z.number().finite().nullable().optional(),
  /** The first eight harmonics of the best candidate: which stand out, and by how much. */
  harmonics: z.array(HumHarmonic).optional(),
  /** 0..1: how clearly the pattern is a mains pattern (fundamental, number of harmonics, how far they stand out). */
  confidence: z.number().min(0).max(1).optional(),
  /** Where it was found: channel names ("L", "R", "ch 3"…) and "L−R" (the side signal, which holds hum in antiphase). */
  signals: z.array(z.string()).optional(),
  /** Share 0..1 of the take's duration where hum is present; null without hum. */
  share: z.number().min(0).max(1).nullable().optional(),
  /** The stretches where it is present. */
  spans: z.array(TimeSpan).optional(),
})
export type MainsHum = z.infer<typeof MainsHum>

export const Spectrum = z.object({
  centroidHz: z.number().finite().nullable(),
  tonalPeaks: z.array(TonalPeak),
  mainsHum: MainsHum,
})
export type Spectrum = z.infer<typeof Spectrum>

/** EBU Tech 3285 broadcast-wave extension chunk; loudness fields decoded to their units. */
export const Bext = z.object({
  description: z.string(),
  originator: z.string(),
  originatorReference: z.string(),
  originationDate: z.string(),
  originationTime: z.string(),
  /** Sample count since midnight of the first sample (64-bit; a number is exact up to 2^53). */
  timeReference: z.number(),
  version: z.number().int(),
  /** Hex string of the 64-byte UMID with trailing zero bytes removed; empty when unset. */
  umid: z.string(),
  loudnessValue: z.number().nullable(),
  loudnessRange: z.number().nullable(),
  maxTruePeakLevel: z.number().nullable(),
  maxMomentaryLoudness: z.number().nullable(),
  maxShortTermLoudness: z.number().nullable(),
  codingHistory: z.string(),
})
export type Bext = z.infer<typeof Bext>

export const Ixml = z.object({
  project: z.string().nullable(),
  scene: z.string().nullable(),
  take: z.string().nullable(),
  tape: z.string().nullable(),
  note: z.string().nullable(),
  /** The whole iXML document as the file holds it. */
  raw: z.string(),
})
export type Ixml = z.infer<typeof Ixml>

export const Cue = z.object({ id: z.number().int(), label: z.string().nullable(), frame: z.number().int() })
export type Cue = z.infer<typeof Cue>

export const Loop = z.object({
  start: z.number().int(),
  end: z.number().int(),
  /** smpl loop type: 0 forward, 1 alternating, 2 backward; other values kept as they are. */
  type: z.number().int(),
})
export type Loop = z.infer<typeof Loop>

export const FileMetadata = z.object({
  bext: Bext.nullable(),
  ixml: Ixml.nullable(),
  /** LIST/INFO entries keyed by their four-character id (INAM, ICMT, IART, ICRD, ISFT, IKEY…). */
  info: z.record(z.string(), z.string()),
  cues: z.array(Cue),
  loops: z.array(Loop),
  /** General tags as music-metadata reads them (title, artist, comment…), for display. */
  tags: z.record(z.string(), z.string()).default({}),
  /** What was not kept of oversized metadata (fields cut, entries not read, chunks skipped), one sentence each. */
  dropped: z.array(z.string()).default([]),
})
export type FileMetadata = z.infer<typeof FileMetadata>

export const NoiseFloor = z.object({
  /**
   * The take's noise floor: the highest of its live channels' floors. A channel's floor is the 10th
   * percentile of the RMS of its 50 ms windows, each window's own mean removed (DC and drift below
   * about 20 Hz), digital-zero windows left out. null when no live channel falls quiet.
   */
  dbfs: Db,
  /** The take never falls quiet: in every live channel the 10th percentile of its 50 ms levels is within 6 dB of the 95th (a drone, steady noise). */
  continuous: z.boolean(),
})
export type NoiseFloor = z.infer<typeof NoiseFloor>

export const Analysis = z.object({
  levels: Levels,
  loudness: Loudness,
  /** Same figure as noiseFloor.dbfs (kept for the library's sort and older readers). */
  noiseFloorDbfs: Db,
  noiseFloor: NoiseFloor.optional(),
  spectrum: Spectrum,
  metadata: FileMetadata,
  /** Character descriptors and tag confidences (absent from analyses stored before them). */
  character: Character.optional(),
})
export type Analysis = z.infer<typeof Analysis>

/** One element of `npm run analyze -- --json` output. */
export const AnalyzeCliResult = z.union([
  z.object({ file: z.string(), ok: z.literal(true), format: WavFormat, analysis: Analysis }),
  z.object({ file: z.string(), ok: z.literal(false), error: z.object({ code: z.string(), message: z.string() }) }),
])
export type AnalyzeCliResult = z.infer<typeof AnalyzeCliResult>

/** Waveform overview in the form wavesurfer.js takes directly: one array per channel, values −1..1, min/max interleaved. */
export const Peaks = z.object({
  durationSeconds: z.number(),
  sampleRate: z.number().int(),
  samplesPerPixel: z.number().int(),
  data: z.array(z.array(z.number())),
})
export type Peaks = z.infer<typeof Peaks>
