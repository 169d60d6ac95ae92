import { z } from 'zod'
import { NameText } from './common'

/** The product's own families of electromagnetic sources. */
export const SOURCE_KINDS = [
  'power-supply',
  'display',
  'radio-link',
  'motor',
  'computer',
  'lighting',
  'mains-wiring',
  'other',
] as const
export const SourceKind = z.enum(SOURCE_KINDS)
export type SourceKind = z.infer<typeof SourceKind>

export const SOURCE_KIND_LABELS: Record<SourceKind, string> = {
  'power-supply': 'Switching power supplies and chargers',
  display: 'Displays and screens',
  'radio-link': 'Radios and wireless links',
  motor: 'Motors and actuators',
  computer: 'Computers and storage',
  lighting: 'Lighting and dimmers',
  'mains-wiring': 'Mains wiring and transformers',
  other: 'Other',
}

export const Source = z.object({
  id: z.number().int(),
  name: z.string(),
  kind: SourceKind,
  makeModel: z.string().nullable(),
  notes: z.string().nullable(),
  createdAt: z.string(),
  takeCount: z.number().int(),
  /** Operating states this device was captured in, most used first. */
  states: z.array(z.string()),
})
export type Source = z.infer<typeof Source>

const text = (max: number) => z.string().trim().max(max)

export const CreateSourceBody = z.object({
  name: NameText(120, 'Give the device a name'),
  kind: SourceKind,
  makeModel: text(200).nullish(),
  notes: text(4000).nullish(),
})
export type CreateSourceBody = z.infer<typeof CreateSourceBody>

export const UpdateSourceBody = CreateSourceBody.partial()
export type UpdateSourceBody = z.infer<typeof UpdateSourceBody>

/** A take's link to a device, in the operating state it was captured in. */
export const TakeSourceLink = z.object({ sourceId: z.number().int().positive(), state: text(80).default('') })
export type TakeSourceLink = z.infer<typeof TakeSourceLink>
