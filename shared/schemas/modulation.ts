import { z } from 'zod'

/**
 * Modulation sources: a take (or an excerpt of it) turned into a control curve for
 * modular rigs. `POST /api/takes/:id/modulation` with a ModulationBody answers the file.
 */
export const MODULATION_LIMITS = {
  /** Longest excerpt turned into a curve, in seconds. */
  maxSeconds: 600,
  /** Most points (rateHz × seconds) in one file. */
  maxPoints: 2_000_000,
  rateHz: { min: 1, max: 48_000 },
  /**
   * MIDI: at most one controller message per millisecond. A three-byte message takes
   * 0.96 ms on a MIDI 1.0 DIN cable (31 250 bit/s, 10 bits a byte: the MIDI 1.0 specification),
   * and the file's clock ticks once a millisecond.
   */
  midiMaxRateHz: 1000,
  /** Attack and release time constants, in ms (0: none). */
  maxMs: 10_000,
} as const

export const ModulationSource = z.enum(['envelope', 'centroid', 'tone'])
export type ModulationSource = z.infer<typeof ModulationSource>

export const ModulationWeighting = z.enum(['plain', 'k'])
export type ModulationWeighting = z.infer<typeof ModulationWeighting>

export const ModulationFormat = z.enum(['wav', 'midi', 'csv'])
export type ModulationFormat = z.infer<typeof ModulationFormat>

const Span = z.object({ low: z.number().finite(), high: z.number().finite() })

const Ms = z.number().finite().min(0).max(MODULATION_LIMITS.maxMs)

export const ModulationBody = z
  .object({
    /** Excerpt of the take, seconds from its start (default: the whole take). */
    startSeconds: z.number().finite().min(0).optional(),
    endSeconds: z.number().finite().positive().optional(),
    /** envelope: amplitude follower; centroid: spectral centroid; tone: strongest tonal component. */
    source: ModulationSource,
    /**
     * envelope: the amplitude as it is (plain) or K-weighted as the BS.1770 loudness meter hears it
     * (k; scaled so a 1 kHz tone reads the same in both). Ignored by centroid and tone.
     */
    weighting: ModulationWeighting.default('plain'),
    /** Rise time constant (envelope; for centroid and tone a slew on the octave value), ms. */
    attackMs: Ms,
    /** Fall time constant, ms. */
    releaseMs: Ms,
    /** Points per second of the curve (the control file's sample rate). */
    rateHz: z.number().int().min(MODULATION_LIMITS.rateHz.min).max(MODULATION_LIMITS.rateHz.max),
    /** Where 0…1 of the control value lands: −1…1 for wav, 0…127 controller steps for midi; csv ignores it. */
    range: Span,
    format: ModulationFormat,
    /** centroid and tone: the frequency of control value 0, Hz. */
    referenceHz: z.number().finite().positive().max(20_000).default(20),
    /** centroid and tone: octaves spanned by control values 0…1 (log2(f / referenceHz) / octaves). */
    octaves: z.number().finite().positive().max(20).default(10),
    /** midi: controller number, 0–119 (120–127 are channel mode messages in MIDI 1.0). */
    controller: z.number().int().min(0).max(119).default(1),
    /** midi: channel 1–16. */
    channel: z.number().int().min(1).max(16).default(1),
    /** wav: what the range becomes at the interface's outputs, written beside the scale (e.g. 0…5 V). */
    volts: Span.optional(),
  })
  .superRefine((b, ctx) => {
    if (b.startSeconds !== undefined && b.endSeconds !== undefined && b.endSeconds <= b.startSeconds) {
      ctx.addIssue({ code: 'custom', path: ['endSeconds'], message: 'endSeconds must be after startSeconds' })
    }
    if (b.range.low === b.range.high)
      ctx.addIssue({ code: 'custom', path: ['range'], message: 'range low and high must differ' })
    if (b.format === 'wav' && [b.range.low, b.range.high].some((v) => v < -1 || v > 1)) {
      ctx.addIssue({
        code: 'custom',
        path: ['range'],
        message: 'a wav control signal spans at most −1…1 (full scale); use e.g. { low: 0, high: 1 }',
      })
    }
    if (b.format === 'midi') {
      if ([b.range.low, b.range.high].some((v) => v < 0 || v > 127)) {
        ctx.addIssue({
          code: 'custom',
          path: ['range'],
          message: 'a MIDI controller spans 0…127; use e.g. { low: 0, high: 127 }',
        })
      }
      if (b.rateHz > MODULATION_LIMITS.midiMaxRateHz) {
        ctx.addIssue({
          code: 'custom',
          path: ['rateHz'],
          message: `MIDI carries at most ${MODULATION_LIMITS.midiMaxRateHz} controller messages a second; choose rateHz ≤ ${MODULATION_LIMITS.midiMaxRateHz}`,
        })
      }
    }
    if (b.volts && b.volts.low === b.volts.high)
      ctx.addIssue({ code: 'custom', path: ['volts'], message: 'volts low and high must differ' })
  })
export type ModulationBody = z.infer<typeof ModulationBody>

/** Response headers of the file: what was made. */
export const MODULATION_HEADERS = {
  points: 'X-Modulation-Points',
  rateHz: 'X-Modulation-Rate-Hz',
  start: 'X-Modulation-Start',
  end: 'X-Modulation-End',
  /** csv: the value column's unit (FS: fraction of full scale; Hz). */
  unit: 'X-Modulation-Unit',
  /** wav and midi: how control values map to the curve, as written in the file. */
  scale: 'X-Modulation-Scale',
} as const

/** Shown beside every export (README, API docs, the bench). */
export const MODULATION_CAUTION =
  'Control outputs from an audio interface must be DC-coupled to reach modular inputs; check your equipment’s voltage range and follow its manuals before patching.'
