import { z } from 'zod'

const text = (max: number) => z.string().trim().max(max)
const isoDate = z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date like 2026-11-30')

export const Rig = z.object({
  /** The pickup: induction coil, telephone pickup coil, … (free text). */
  pickup: text(120).default(''),
  gainDb: z.number().min(-20).max(90).nullable().default(null),
  recorder: text(120).default(''),
  notes: text(4000).default(''),
})
export type Rig = z.infer<typeof Rig>

export const CaptureSession = z.object({
  id: z.number().int(),
  title: z.string(),
  date: z.string(),
  location: z.string(),
  rig: Rig,
  defaultSourceId: z.number().int().nullable(),
  defaultState: z.string(),
  createdBy: z.object({ id: z.number().int(), name: z.string() }).nullable(),
  createdAt: z.string(),
  updatedAt: z.string(),
  takeCount: z.number().int(),
  totalDurationSeconds: z.number(),
  humCounts: z.object({ '50': z.number().int(), '60': z.number().int() }),
  /** One tiny waveform per take (up to 24 takes), each a short list of 0..1 amplitudes. */
  strip: z.array(z.array(z.number())),
})
export type CaptureSession = z.infer<typeof CaptureSession>

export const CreateCaptureSessionBody = z.object({
  title: text(200).min(1, 'Give the capture session a title'),
  date: isoDate,
  location: text(200).default(''),
  rig: Rig.default({ pickup: '', gainDb: null, recorder: '', notes: '' }),
  defaultSourceId: z.number().int().positive().nullable().default(null),
  defaultState: text(80).default(''),
})
export type CreateCaptureSessionBody = z.infer<typeof CreateCaptureSessionBody>

export const UpdateCaptureSessionBody = z
  .object({
    title: text(200).min(1),
    date: isoDate,
    location: text(200),
    rig: z
      .object({
        pickup: text(120),
        gainDb: z.number().min(-20).max(90).nullable(),
        recorder: text(120),
        notes: text(4000),
      })
      .partial(),
    defaultSourceId: z.number().int().positive().nullable(),
    defaultState: text(80),
  })
  .partial()
export type UpdateCaptureSessionBody = z.infer<typeof UpdateCaptureSessionBody>
