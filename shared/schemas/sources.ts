import { z } from 'zod'
import { NameText } from './common'

/**
 * The families of devices this trade points pickups at: the one list of source
 * kinds (server enum, filters, pickers, and the colour per kind all read it).
 * Ids are API values kept stable across relabelling: 'radio-link' now also
 * holds phones, 'mains-wiring' also transformers; camera, appliance and
 * vehicle were added, so no stored row needed a new kind.
 */
export const SOURCE_KINDS = [
  'power-supply',
  'display',
  'radio-link',
  'computer',
  'motor',
  'camera',
  'lighting',
  'appliance',
  'mains-wiring',
  'vehicle',
  'other',
] as const
export const SourceKind = z.enum(SOURCE_KINDS)
export type SourceKind = z.infer<typeof SourceKind>

export const SOURCE_KIND_LABELS: Record<SourceKind, string> = {
  'power-supply': 'Power supplies and chargers',
  display: 'Displays',
  'radio-link': 'Phones and radios',
  computer: 'Computers and storage',
  motor: 'Motors and fans',
  camera: 'Cameras',
  lighting: 'Lighting',
  appliance: 'Household appliances',
  'mains-wiring': 'Transformers and mains wiring',
  vehicle: 'Vehicles',
  other: 'Other',
}

/** A caution shown beside kinds where the pickup goes near mains voltage. */
export const SOURCE_KIND_CAUTIONS: Partial<Record<SourceKind, string>> = {
  'mains-wiring':
    'From outside only: never open a transformer, a socket or a wiring box. Follow local electrical codes.',
  appliance: 'Mains-powered: keep it closed and listen from outside.',
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
