// Named export profiles and their words, without zod: the build process and the
// render worker use these and must not load the schema library.
import type { ExportProfile, ProfileChannels } from './packs'

/** Named starting points, in the product's own words; any field can then be changed (the custom profile). */
export const EXPORT_PRESETS = [
  {
    key: 'compact-hardware',
    name: 'Compact hardware sampler',
    summary: '48 kHz, 16-bit, mono, 24-character names',
    profile: { sampleRate: 48000, channels: 'mono', bitDepth: 16, maxSeconds: null, maxNameLength: 24, layout: 'flat' },
  },
  {
    key: 'pocket-sampler',
    name: 'Pocket sampler with a small screen',
    summary: '44.1 kHz, 16-bit, mono, 16-character names, items up to 20 s',
    profile: { sampleRate: 44100, channels: 'mono', bitDepth: 16, maxSeconds: 20, maxNameLength: 16, layout: 'flat' },
  },
  {
    key: 'desktop-instrument',
    name: 'Desktop instrument library',
    summary: '48 kHz, 24-bit, channels kept, 32-character names, a folder per source kind',
    profile: {
      sampleRate: 48000,
      channels: 'keep',
      bitDepth: 24,
      maxSeconds: null,
      maxNameLength: 32,
      layout: 'by-kind',
    },
  },
  {
    key: 'archive-sorted',
    name: 'Archive copy, sorted',
    summary: 'source rate, 32-bit float, channels kept, a folder per source kind',
    profile: {
      sampleRate: 'source',
      channels: 'keep',
      bitDepth: 32,
      maxSeconds: null,
      maxNameLength: null,
      layout: 'by-kind',
    },
  },
] as const satisfies readonly { key: string; name: string; summary: string; profile: ExportProfile }[]
export type ExportPresetKey = (typeof EXPORT_PRESETS)[number]['key']

export const presetProfile = (key: ExportPresetKey): ExportProfile => ({
  ...EXPORT_PRESETS.find((p) => p.key === key)!.profile,
})

/** The preset a profile equals field for field, or null (a custom profile). */
export function presetOf(p: ExportProfile | null | undefined): ExportPresetKey | null {
  if (!p) return null
  const same = (q: ExportProfile) => (Object.keys(q) as (keyof ExportProfile)[]).every((k) => q[k] === p[k])
  return EXPORT_PRESETS.find((x) => same(x.profile))?.key ?? null
}

const CHANNEL_WORDS: Record<ProfileChannels, string> = {
  keep: 'channels as recorded',
  mono: 'mono',
  left: 'left channel',
  right: 'right channel',
}

/** "48 kHz, 16-bit, mono, names up to 24 characters, flat": how the pages describe a delivery's format. */
export function profileSummary(p: ExportProfile): string {
  const rate = p.sampleRate === 'source' ? 'source rate' : `${p.sampleRate / 1000} kHz`
  const bits = p.bitDepth === 32 ? '32-bit float' : `${p.bitDepth}-bit`
  return [
    rate,
    bits,
    CHANNEL_WORDS[p.channels],
    p.maxSeconds !== null ? `items up to ${p.maxSeconds} s` : '',
    p.maxNameLength !== null ? `names up to ${p.maxNameLength} characters` : '',
    p.layout === 'by-kind' ? 'a folder per source kind' : 'flat',
  ]
    .filter(Boolean)
    .join(', ')
}
