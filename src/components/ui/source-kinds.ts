// The families of source devices that carry their own colour everywhere a
// device shows (chips, library rows, the capture board). Kinds come from
// shared/schemas/sources.ts; a kind not listed here (a new one, or one from
// a later version) falls into "other", so the mapping never breaks.
export const KIND_FAMILIES = ['mains', 'switching', 'radio', 'motor', 'display', 'camera', 'other'] as const
export type KindFamily = (typeof KIND_FAMILIES)[number]

export const FAMILY_LABELS: Record<KindFamily, string> = {
  mains: 'Mains and power',
  switching: 'Switching supplies',
  radio: 'Radio and data',
  motor: 'Motors',
  display: 'Displays',
  camera: 'Cameras',
  other: 'Other',
}

const FAMILY_OF_KIND: Record<string, KindFamily> = {
  'mains-wiring': 'mains',
  lighting: 'mains',
  // Mains-powered and closed: what a pickup hears from outside is its mains side.
  appliance: 'mains',
  'power-supply': 'switching',
  'radio-link': 'radio',
  computer: 'radio',
  motor: 'motor',
  // Alternators, fans and drive motors are what a coil hears from a vehicle.
  vehicle: 'motor',
  display: 'display',
  camera: 'camera',
}

export function kindFamily(kind: string | null | undefined): KindFamily {
  return (kind && FAMILY_OF_KIND[kind]) || 'other'
}

/** The CSS custom property holding a kind's colour (defined in src/styles/_tokens.scss). */
export function kindColor(kind: string | null | undefined): string {
  return `var(--sf-kind-${kindFamily(kind)})`
}
