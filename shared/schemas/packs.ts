// Sample packs: curated items of takes, rendered to a spec, built into numbered
// zip versions and delivered to producers or through share links.
import { z } from 'zod'
import { longEnough, TOO_SHORT_MESSAGE } from './common'
import { EXPORT_PRESETS, type ExportPresetKey as PresetKey } from './packs-profiles'
import { checkModulationCurve, ModulationCurveFields, ModulationFormat, ModulationSource } from './modulation'

export * from './packs-profiles'

const text = (max: number) => z.string().trim().max(max)

// ---- render settings ----

export const NORMALIZE_MODES = ['loudness', 'peak', 'none'] as const
export const NormalizeMode = z.enum(NORMALIZE_MODES)
export type NormalizeMode = z.infer<typeof NormalizeMode>

/** 16 and 24 are PCM (TPDF-dithered when the word length shrinks); 32 is 32-bit float. */
export const BIT_DEPTHS = [16, 24, 32] as const
export const BitDepth = z.union([z.literal(16), z.literal(24), z.literal(32)])
export type BitDepth = z.infer<typeof BitDepth>

export const ITEM_KINDS = ['one-shot', 'loop'] as const
export const ItemKind = z.enum(ITEM_KINDS)
export type ItemKind = z.infer<typeof ItemKind>

// ---- export profiles ----

/** Output sample rates of a profile: the source's own, or one of the two rates samplers commonly play. */
export const PROFILE_SAMPLE_RATES = ['source', 44100, 48000] as const
export const ProfileSampleRate = z.union([z.literal('source'), z.literal(44100), z.literal(48000)])
export type ProfileSampleRate = z.infer<typeof ProfileSampleRate>
/** keep: as recorded; mono: the mean of all channels; left / right: the first / second channel alone. */
export const PROFILE_CHANNELS = ['keep', 'mono', 'left', 'right'] as const
export const ProfileChannels = z.enum(PROFILE_CHANNELS)
export type ProfileChannels = z.infer<typeof ProfileChannels>
/** flat: every file at the zip's top; by-kind: one folder per kind of source device (SOURCE_KINDS). */
export const PROFILE_LAYOUTS = ['flat', 'by-kind'] as const
export const ProfileLayout = z.enum(PROFILE_LAYOUTS)
export type ProfileLayout = z.infer<typeof ProfileLayout>
/** Shortest name limit a profile may set: room for a word, a separator and a two-digit index. */
export const MIN_NAME_LIMIT = 8

/** How a pack's files are delivered for a sampler: format, longest item, name length and folders. */
export const ExportProfile = z
  .object({
    sampleRate: ProfileSampleRate,
    channels: ProfileChannels,
    bitDepth: z.union([z.literal(16), z.literal(24), z.literal(32)]),
    /** Items longer than this are refused, naming the item and its length; null: no limit. */
    maxSeconds: z.number().positive().max(86_400).nullable(),
    /** Longest file name before `.wav`; longer names are shortened, readably and uniquely. null: the usual 80. */
    maxNameLength: z.number().int().min(MIN_NAME_LIMIT).max(80).nullable(),
    layout: ProfileLayout,
  })
  .strict()
export type ExportProfile = z.infer<typeof ExportProfile>

export const ExportPresetKey = z.enum(EXPORT_PRESETS.map((p) => p.key) as [PresetKey, ...PresetKey[]])
export type ExportPresetKey = z.infer<typeof ExportPresetKey>

export const RenderSettings = z.object({
  normalize: NormalizeMode,
  /** Integrated loudness target (ITU-R BS.1770-4) for normalize = 'loudness'. */
  loudnessTargetLufs: z.number().min(-60).max(0),
  /** True-peak target for normalize = 'peak'. */
  peakTargetDbtp: z.number().min(-60).max(0),
  /** Never exceeded, whatever the mode: the gain is lowered to respect it (no limiter). */
  truePeakCeilingDbtp: z.number().min(-60).max(0),
  bitDepth: BitDepth,
  /** Equal-power (quarter-sine) fades of one-shots; loops are cut on zero crossings instead. */
  fadeInMs: z.number().min(0).max(10_000),
  fadeOutMs: z.number().min(0).max(10_000),
  /** Delivery format for a sampler; absent or null: the source's rate and channels, `bitDepth` above, flat, 80-character names. */
  profile: ExportProfile.nullable().optional(),
})
export type RenderSettings = z.infer<typeof RenderSettings>

export const DEFAULT_RENDER_SETTINGS: RenderSettings = {
  normalize: 'loudness',
  loudnessTargetLufs: -18,
  peakTargetDbtp: -1,
  truePeakCeilingDbtp: -1,
  bitDepth: 24,
  fadeInMs: 5,
  fadeOutMs: 5,
}

/** Any subset of the settings: a PATCH of the pack's settings, or an item's override. */
export const RenderSettingsPatch = RenderSettings.partial().strict()
export type RenderSettingsPatch = z.infer<typeof RenderSettingsPatch>
/** An item's override: the profile is the pack's alone (names and folders are decided pack-wide). */
/**
 * A control curve written beside the item's audio in builds, over the item's own range (the options of
 * `POST /api/takes/:id/modulation` without the excerpt). null or absent: audio only.
 */
export const ItemModulation = ModulationCurveFields.strict().superRefine(checkModulationCurve)
export type ItemModulation = z.infer<typeof ItemModulation>
export const ItemSettingsPatch = RenderSettingsPatch.omit({ profile: true }).extend({
  modulation: ItemModulation.nullable().optional(),
})
export type ItemSettingsPatch = z.infer<typeof ItemSettingsPatch>

/** An item's settings: the defaults, the pack's on top, the item's override on top of those; a profile sets the bit depth. */
export function effectiveSettings(
  pack: RenderSettingsPatch | null | undefined,
  item?: RenderSettingsPatch | null,
): RenderSettings {
  const { profile: _ignored, ...override } = item ?? {}
  const s = RenderSettings.parse({ ...DEFAULT_RENDER_SETTINGS, ...(pack ?? {}), ...override })
  return s.profile ? { ...s, bitDepth: s.profile.bitDepth } : s
}

// ---- licences and names ----

/** The product's own licence wordings, offered as starting points; the pack keeps its edited text. */
export const LICENCE_TEMPLATES = [
  {
    key: 'royalty-free',
    name: 'Royalty-free for use in productions',
    text:
      'You may use these sounds, edited or unedited, inside your own productions (films, games, music, ' +
      'broadcasts, installations, apps) for any purpose, paid or unpaid, without further fees. You may not ' +
      'sell, share or give away the sounds themselves, alone or as part of another sound collection.',
  },
  {
    key: 'team-internal',
    name: 'Team internal only',
    text:
      "For use by members of this team on the team's own projects only. Do not pass these files, or " +
      'productions that contain them, to anyone outside the team without written agreement.',
  },
  {
    key: 'attribution',
    name: 'Attribution required',
    text:
      'You may use these sounds in your productions, edited or unedited, provided the credits name the ' +
      'recording team as the source of the sounds. You may not resell or redistribute the sounds as sounds.',
  },
] as const
export type LicenceTemplateKey = (typeof LICENCE_TEMPLATES)[number]['key']
export const LicenceTemplateKey = z.enum(
  LICENCE_TEMPLATES.map((t) => t.key) as [LicenceTemplateKey, ...LicenceTemplateKey[]],
)

/**
 * Tokens of a naming template, each replaced per item:
 * {device} first source device, {state} its operating state, {kind} one-shot or loop,
 * {descriptor} first tag (or first word of the take title), {region} name of the region the item was cut from,
 * {session} capture session title, {date} session date as YYYYMMDD, {index} position in the pack
 * (zero-padded to 2 digits or more), {take} take id, {title} take title, {file} original file name
 * without extension, {pack} pack name.
 */
export const NAMING_TOKENS = [
  'device',
  'state',
  'kind',
  'descriptor',
  'region',
  'session',
  'date',
  'index',
  'take',
  'title',
  'file',
  'pack',
] as const
export type NamingToken = (typeof NAMING_TOKENS)[number]
/** One line per token, shown beside the naming template field. */
export const NAMING_TOKEN_HELP: Record<NamingToken, string> = {
  device: 'the first source device of the take',
  state: "that device's operating state",
  kind: 'one-shot or loop',
  descriptor: "the take's first tag, else the first word of its title",
  region: 'the name of the region the item was cut from (empty for a whole take)',
  session: 'the capture session title',
  date: 'the capture date as YYYYMMDD',
  index: 'the place in the pack, 01, 02…',
  take: 'the take number',
  title: 'the take title',
  file: 'the original file name, without .wav',
  pack: 'the pack name',
}
export const DEFAULT_NAMING_TEMPLATE = '{device}_{descriptor}_{index}'
/** What the default template becomes for an item cut from a named region: the region's name stands in for the descriptor. */
export const DEFAULT_REGION_NAMING_TEMPLATE = '{device}_{region}_{index}'
/** Longest output name, before `.wav`. */
export const MAX_OUTPUT_NAME = 80

export const NamingTemplate = text(200)
  .min(1, 'A naming template needs at least one token or character')
  .refine((t) => [...t.matchAll(/\{([^}]*)\}/g)].every((m) => (NAMING_TOKENS as readonly string[]).includes(m[1])), {
    message: `Unknown token; use ${NAMING_TOKENS.map((t) => `{${t}}`).join(' ')}`,
  })

// ---- requests ----

const seconds = z.number().finite().min(0)

export const CreatePackBody = z.object({
  name: text(120).min(1, 'Give the pack a name'),
  description: text(4000).default(''),
  /** Licence text; when omitted, the text of licenceTemplate (default: royalty-free). */
  licenceText: text(20_000).optional(),
  licenceTemplate: LicenceTemplateKey.optional(),
  namingTemplate: NamingTemplate.default(DEFAULT_NAMING_TEMPLATE),
  settings: RenderSettingsPatch.default({}),
})
export type CreatePackBody = z.infer<typeof CreatePackBody>

export const UpdatePackBody = z
  .object({
    name: text(120).min(1),
    description: text(4000),
    licenceText: text(20_000),
    namingTemplate: NamingTemplate,
    /** Merged into the current settings. */
    settings: RenderSettingsPatch,
  })
  .partial()
  .strict()
export type UpdatePackBody = z.infer<typeof UpdatePackBody>

/** A range given with both ends is checked here; one end against the take's length, by the service. */
const rangeLongEnough = (r: { startSeconds?: number | null; endSeconds?: number | null }) =>
  r.startSeconds == null ||
  r.endSeconds == null ||
  r.endSeconds <= r.startSeconds ||
  longEnough(r.startSeconds, r.endSeconds)

export const AddItemBody = z
  .object({
    takeId: z.number().int().positive(),
    /** Omit both for the whole take. */
    startSeconds: seconds.optional(),
    endSeconds: seconds.optional(),
    /** A region of the take this item was cut from (kept as a reference; its range is copied). */
    regionId: z.number().int().positive().optional(),
    /** An explicit output name (sanitised); omitted: from the pack's naming template. */
    name: text(200).optional(),
    kind: ItemKind.default('one-shot'),
    settings: ItemSettingsPatch.optional(),
  })
  .strict()
  .refine(rangeLongEnough, { message: TOO_SHORT_MESSAGE, path: ['endSeconds'] })
export type AddItemBody = z.infer<typeof AddItemBody>

export const AddItemsBody = z.object({ items: z.array(AddItemBody).min(1).max(500) }).strict()
export type AddItemsBody = z.infer<typeof AddItemsBody>

export const UpdateItemBody = z
  .object({
    /** null for the start (or end) of the take. */
    startSeconds: seconds.nullable(),
    endSeconds: seconds.nullable(),
    /** null: back to the naming template. */
    name: text(200).nullable(),
    kind: ItemKind,
    /** null: no override. */
    settings: ItemSettingsPatch.nullable(),
  })
  .partial()
  .strict()
  .refine(rangeLongEnough, { message: TOO_SHORT_MESSAGE, path: ['endSeconds'] })
export type UpdateItemBody = z.infer<typeof UpdateItemBody>

export const ReorderItemsBody = z.object({ itemIds: z.array(z.number().int().positive()).max(5000) }).strict()
export type ReorderItemsBody = z.infer<typeof ReorderItemsBody>

export const CreateShareLinkBody = z
  .object({
    expiresAt: z.iso.datetime({ offset: true }),
    maxDownloads: z.number().int().min(1).max(1_000_000).nullable().optional(),
  })
  .strict()
export type CreateShareLinkBody = z.infer<typeof CreateShareLinkBody>

/** POST /api/pack-builds/:id/publish: the "what changed" note followers receive (may be left empty). */
export const PublishBuildBody = z.object({ note: text(4000).optional() }).strict()
export type PublishBuildBody = z.infer<typeof PublishBuildBody>

/** GET /api/packs/:id/naming-preview?template=…: the output names a template would give the pack's items. */
export const NamingPreviewQuery = z.object({
  template: NamingTemplate,
  /** A name length limit to preview (a profile's maxNameLength); omitted: the pack's own profile decides. */
  maxNameLength: z.coerce.number().int().min(MIN_NAME_LIMIT).max(80).optional(),
  /** 'by-kind' to preview folders too. */
  layout: ProfileLayout.optional(),
})
export type NamingPreviewQuery = z.infer<typeof NamingPreviewQuery>
export const NamingPreview = z.object({
  names: z.array(
    z.object({
      itemId: z.number().int(),
      outputName: z.string(),
      fileName: z.string(),
      /** The name before shortening. */
      fullName: z.string(),
      folder: z.string().nullable(),
    }),
  ),
})
export type NamingPreview = z.infer<typeof NamingPreview>

const num = z.coerce.number().finite()
/** GET /api/takes/:id/export: a range, and a pack's settings (or the defaults) with any field overridden. */
export const QuickExportQuery = z
  .object({
    start: num.min(0).optional(),
    end: num.min(0).optional(),
    packId: z.coerce.number().int().positive().optional(),
    kind: ItemKind.optional(),
    name: text(200).optional(),
    normalize: NormalizeMode.optional(),
    loudnessTargetLufs: num.min(-60).max(0).optional(),
    peakTargetDbtp: num.min(-60).max(0).optional(),
    truePeakCeilingDbtp: num.min(-60).max(0).optional(),
    bitDepth: z.coerce.number().pipe(BitDepth).optional(),
    fadeInMs: num.min(0).max(10_000).optional(),
    fadeOutMs: num.min(0).max(10_000).optional(),
    /** A named export profile (EXPORT_PRESETS); 'none' for no profile even when the pack has one. */
    preset: z.union([ExportPresetKey, z.literal('none')]).optional(),
  })
  .refine((q) => q.start === undefined || q.end === undefined || q.end <= q.start || longEnough(q.start, q.end), {
    message: TOO_SHORT_MESSAGE,
    path: ['end'],
  })
export type QuickExportQuery = z.infer<typeof QuickExportQuery>

// ---- answers ----

const Person = z.object({ id: z.number().int(), name: z.string() }).nullable()
const Lufs = z.number().nullable()

/** Numbers of the source range before rendering, and the gain the renderer expects to apply. */
export const ItemSourceLevels = z.object({
  integratedLufs: Lufs,
  truePeakDbtp: Lufs,
  loudnessRangeLu: Lufs,
  /** 'take': the take's own measurement (whole take); 'range': measured over the item's range. */
  measuredFrom: z.enum(['take', 'range']),
  /** Gain the render settings ask for, after the ceiling. */
  expectedGainDb: Lufs,
  /** > 0 when the ceiling will keep the item below its target. */
  expectedUnderTargetDb: Lufs,
})
export type ItemSourceLevels = z.infer<typeof ItemSourceLevels>

/** Numbers measured on the rendered file of a build (by the engine, on the exact samples written). */
export const ItemRenderedLevels = z.object({
  buildId: z.number().int(),
  version: z.number().int(),
  file: z.string(),
  integratedLufs: Lufs,
  truePeakDbtp: Lufs,
  loudnessRangeLu: Lufs,
  gainDb: z.number(),
  /** null when the item reached its target; else how many dB short (the true-peak ceiling held it back). */
  underTargetDb: Lufs,
  sizeBytes: z.number().int(),
  sha256: z.string(),
})
export type ItemRenderedLevels = z.infer<typeof ItemRenderedLevels>

export const PackItem = z.object({
  id: z.number().int(),
  /** 1-based place in the pack; {index} of the naming template. */
  position: z.number().int(),
  takeId: z.number().int(),
  regionId: z.number().int().nullable(),
  /** The region's name: {region} of the naming template, in the bext description and the manifest. */
  regionName: z.string().nullable(),
  take: z.object({
    id: z.number().int(),
    title: z.string(),
    filename: z.string(),
    sessionTitle: z.string(),
    status: z.string(),
    durationSeconds: z.number().nullable(),
    sampleRate: z.number().int().nullable(),
    channels: z.number().int().nullable(),
    bitsPerSample: z.number().int().nullable(),
    sources: z.array(z.object({ name: z.string(), state: z.string() })),
    tags: z.array(z.string()),
  }),
  /** null: from the start / to the end of the take. */
  startSeconds: z.number().nullable(),
  endSeconds: z.number().nullable(),
  durationSeconds: z.number(),
  kind: ItemKind,
  /** The explicit name, or null when the naming template decides. */
  name: z.string().nullable(),
  /** The file name it renders to, without `.wav`: sanitised and unique within the pack. */
  outputName: z.string(),
  fileName: z.string(),
  /** The folder inside the zip (by-kind layout), or null at the top. */
  folder: z.string().nullable().optional(),
  /** The name before the profile's length limit shortened it (without `.wav`); equal to outputName when it fits. */
  fullName: z.string().optional(),
  settings: ItemSettingsPatch.nullable(),
  effectiveSettings: RenderSettings,
  source: ItemSourceLevels,
  /** From the newest finished build holding this item, or null. */
  rendered: ItemRenderedLevels.nullable(),
})
export type PackItem = z.infer<typeof PackItem>

export const BUILD_STATUSES = ['queued', 'running', 'done', 'failed'] as const
export const BuildStatus = z.enum(BUILD_STATUSES)
export type BuildStatus = z.infer<typeof BuildStatus>

export const PackBuild = z.object({
  id: z.number().int(),
  packId: z.number().int(),
  packName: z.string(),
  /** 1, 2, 3… per pack. */
  version: z.number().int(),
  status: BuildStatus,
  /** 0..1 */
  progress: z.number(),
  itemCount: z.number().int(),
  sizeBytes: z.number().int().nullable(),
  sha256: z.string().nullable(),
  /** e.g. "item 3 (hum_transformer_01): take 12's audio file is missing". */
  error: z.string().nullable(),
  failedItem: z
    .object({ position: z.number().int(), itemId: z.number().int().nullable(), name: z.string() })
    .nullable(),
  /** The download's file name, `<pack-name>_v<version>.zip`. */
  fileName: z.string(),
  downloadUrl: z.string().nullable(),
  createdBy: Person,
  createdAt: z.string(),
  startedAt: z.string().nullable(),
  finishedAt: z.string().nullable(),
  publishedAt: z.string().nullable(),
  publishedBy: Person,
  /** "What changed", written by the designer when publishing. */
  changeNote: z.string().nullable(),
})
export type PackBuild = z.infer<typeof PackBuild>

/** GET /api/pack-builds/:id/changes: what a build changes against the newest published version before it (the note's starting text). */
export const BuildChanges = z.object({
  /** The version compared against, or null when nothing was published before. */
  sinceVersion: z.number().int().nullable(),
  added: z.array(z.string()),
  removed: z.array(z.string()),
  renamed: z.array(z.object({ from: z.string(), to: z.string() })),
  /** Same item, rendered differently (range, type, render spec or source take changed). */
  rerendered: z.array(z.string()),
  /** The lists as plain text, one line each. */
  text: z.string(),
})
export type BuildChanges = z.infer<typeof BuildChanges>

/** One rendered item of a published build, as producers and share visitors get it. */
export const PublishedItem = z.object({
  /** The pack item it was rendered from. */
  id: z.number().int(),
  position: z.number().int(),
  fileName: z.string(),
  kind: ItemKind,
  regionName: z.string().nullable(),
  durationSeconds: z.number(),
  integratedLufs: z.number().nullable(),
  truePeakDbtp: z.number().nullable(),
  sizeBytes: z.number().int(),
  /** The item's WAV out of the zip, inline (for the player). */
  auditionUrl: z.string(),
  /** The same bytes as a download. */
  downloadUrl: z.string(),
})
export type PublishedItem = z.infer<typeof PublishedItem>

export const Pack = z.object({
  id: z.number().int(),
  name: z.string(),
  description: z.string(),
  licenceText: z.string(),
  namingTemplate: z.string(),
  settings: RenderSettings,
  itemCount: z.number().int(),
  totalDurationSeconds: z.number(),
  createdBy: Person,
  createdAt: z.string(),
  updatedAt: z.string(),
  latestBuild: PackBuild.nullable(),
  /** The newest published build, what producers download. */
  publishedBuild: PackBuild.nullable(),
  following: z.boolean(),
  followerCount: z.number().int(),
})
export type Pack = z.infer<typeof Pack>

export const PackDetail = Pack.extend({ items: z.array(PackItem) })
export type PackDetail = z.infer<typeof PackDetail>

export const SHARE_LINK_STATES = ['active', 'expired', 'revoked', 'used-up'] as const
export const ShareLink = z.object({
  id: z.number().int(),
  buildId: z.number().int(),
  /** The page address for the recipient: `${publicUrl}/share/<token>`. */
  url: z.string(),
  /** The file itself: `${publicUrl}/api/share/<token>/download`. */
  downloadUrl: z.string(),
  token: z.string(),
  expiresAt: z.string(),
  maxDownloads: z.number().int().nullable(),
  /** Downloads started from byte 0 (resumed ranges do not count). */
  downloads: z.number().int(),
  revokedAt: z.string().nullable(),
  state: z.enum(SHARE_LINK_STATES),
  createdBy: Person,
  createdAt: z.string(),
  lastDownloadAt: z.string().nullable(),
})
export type ShareLink = z.infer<typeof ShareLink>

/** What GET /api/share/:token tells a recipient without an account. */
export const ShareInfo = z.object({
  packName: z.string(),
  description: z.string(),
  licenceText: z.string(),
  version: z.number().int(),
  fileName: z.string(),
  sizeBytes: z.number().int(),
  itemCount: z.number().int(),
  expiresAt: z.string(),
  downloadsLeft: z.number().int().nullable(),
  downloadUrl: z.string(),
  /** The build's items; single items do not count against the link's download limit. */
  items: z.array(PublishedItem),
  /** The build's "what changed" note. */
  changeNote: z.string().nullable(),
  /** The export profile's summary (profileSummary), or null when the files keep their source format. */
  format: z.string().nullable().optional(),
})
export type ShareInfo = z.infer<typeof ShareInfo>

/** One row of manifest.json (manifest.csv has the same columns). */
/** A control curve file in the zip: where, what it follows, its format, its rate and how its values read. */
export const ManifestModulation = z.object({
  file: z.string(),
  source: ModulationSource,
  format: ModulationFormat,
  rateHz: z.number(),
  /** wav and midi: the control values' meaning (e.g. "0..1 = envelope 0..1 of full scale"); csv: its unit. */
  scale: z.string().nullable(),
})
export type ManifestModulation = z.infer<typeof ManifestModulation>

export const ManifestItem = z.object({
  file: z.string(),
  durationSeconds: z.number(),
  sampleRate: z.number().int(),
  bitDepth: z.number().int(),
  channels: z.number().int(),
  integratedLufs: Lufs,
  truePeakDbtp: Lufs,
  loudnessRangeLu: Lufs,
  underTargetDb: Lufs,
  /** "name (state)" of each source device. */
  sources: z.array(z.string()),
  tags: z.array(z.string()),
  takeId: z.number().int(),
  /** Name of the region the item was cut from, or null. */
  regionName: z.string().nullable(),
  licence: z.string(),
  sha256: z.string(),
  /** The item's name before the profile's length limit shortened it, with `.wav`. */
  originalName: z.string().optional(),
  /** The take's file name as it was uploaded. */
  sourceFile: z.string().optional(),
  /** Control curves written beside the audio (absent in builds made before them). */
  modulation: z.array(ManifestModulation).optional(),
})
export type ManifestItem = z.infer<typeof ManifestItem>
