// Curating packs: the pack itself, its ordered items and the API objects.
// Who sees what: 'packs:manage' (designers, admins) see every pack and build;
// 'packs:receive' without manage (producers) see only packs that have a
// published build, and of those only the published builds. Anything hidden
// answers 404 exactly like a missing id, so its existence does not leak.
import { can } from '@shared/permissions'
import type { User } from '@shared/schemas/auth'
import type { Analysis } from '@shared/schemas/analysis'
import { longEnough, MIN_SELECTION_MS } from '@shared/schemas/common'
import {
  DEFAULT_NAMING_TEMPLATE,
  DEFAULT_RENDER_SETTINGS,
  LICENCE_TEMPLATES,
  RenderSettings,
  RenderSettingsPatch,
  ItemSettingsPatch,
  effectiveSettings,
  presetProfile,
  type AddItemBody,
  type CreatePackBody,
  type ItemKind,
  type NamingPreview,
  type Pack,
  type PackDetail,
  type PackItem,
  type QuickExportQuery,
  type UpdateItemBody,
  type UpdatePackBody,
} from '@shared/schemas/packs'
import type { AppContext } from '../../core/context'
import type { Db } from '../../core/database'
import { AppError } from '../../core/errors'
import type { PackItemRow } from '../../../db/schema-packs'
import { planGain, round2 } from '../../render/settings'
import { itemNames, type NamingFacts } from './naming'
import { tooLongItem, tooLongText, type ItemSpec } from './item-spec'
import * as repo from '../packs.repository'
import { buildToApi } from '../builds/builds.mapper'
import { itemSeconds, newestPublished, publishedDetail, renderedOf, snapshotOf } from '../builds/published'

export const managesPacks = (user: Pick<User, 'role'>) => can(user.role, 'packs:manage')

export const packNotFound = () => new AppError(404, 'PACK_NOT_FOUND', 'No pack with that id')
export const itemNotFound = () => new AppError(404, 'ITEM_NOT_FOUND', 'No item with that id in this pack')

const parseSettings = (json: string | null): RenderSettings =>
  effectiveSettings(json ? (JSON.parse(json) as object) : null)
export const parseSettingsOf = (pack: { settings_json: string }): RenderSettings => parseSettings(pack.settings_json)
const parsePatch = (json: string | null) => (json ? ItemSettingsPatch.parse(JSON.parse(json)) : null)

/** The pack, or 404 when it does not exist or the user may not see it. */
export async function visiblePack(db: Db, user: User, id: number): Promise<repo.PackJoined> {
  const pack = await repo.findPack(db, id)
  if (!pack) throw packNotFound()
  if (!managesPacks(user)) {
    const published = await repo.buildsOf(db, id, true)
    if (!published.length) throw packNotFound()
  }
  return pack
}

export async function managedPack(db: Db, id: number): Promise<repo.PackJoined> {
  const pack = await repo.findPack(db, id)
  if (!pack) throw packNotFound()
  return pack
}

// ---- API objects ----

export async function packsToApi(ctx: AppContext, user: User, rows: repo.PackJoined[]): Promise<Pack[]> {
  const ids = rows.map((r) => r.id)
  const [totals, headlines, follows] = await Promise.all([
    repo.packTotals(ctx.db, ids),
    repo.headlineBuilds(ctx.db, ids),
    repo.followInfo(ctx.db, ids, user.id),
  ])
  const manager = managesPacks(user)
  return rows.map((r) => {
    const mine = headlines.filter((b) => b.pack_id === r.id)
    const latest = mine.reduce<repo.BuildJoined | null>((a, b) => (!a || b.version > a.version ? b : a), null)
    const published = mine
      .filter((b) => b.published_at)
      .reduce<repo.BuildJoined | null>((a, b) => (!a || b.version > a.version ? b : a), null)
    const t = totals.find((x) => x.pack_id === r.id)
    const f = follows.find((x) => x.pack_id === r.id)
    const publishedBuild = published ? buildToApi(published) : null
    // Those who do not manage packs see the published version as it was frozen, never the draft.
    const frozen = !manager && published ? snapshotOf(published) : null
    const api: Pack = {
      id: r.id,
      name: r.name,
      description: r.description,
      licenceText: r.licence_text,
      namingTemplate: r.naming_template,
      settings: parseSettings(r.settings_json),
      itemCount: Number(t?.count ?? 0),
      totalDurationSeconds: Number(t?.seconds ?? 0),
      createdBy: r.created_by && r.creator_name ? { id: r.created_by, name: r.creator_name } : null,
      createdAt: r.created_at,
      updatedAt: r.updated_at,
      latestBuild: manager ? (latest ? buildToApi(latest) : null) : publishedBuild,
      publishedBuild,
      following: Number(f?.mine ?? 0) === 1,
      followerCount: Number(f?.count ?? 0),
    }
    if (!frozen) return api
    return {
      ...api,
      name: frozen.pack.name,
      description: frozen.pack.description,
      licenceText: frozen.pack.licenceText,
      namingTemplate: frozen.pack.namingTemplate,
      settings: frozen.pack.settings,
      itemCount: frozen.items.length,
      totalDurationSeconds: frozen.items.reduce((n, s) => n + itemSeconds(s), 0),
      createdAt: published!.created_at,
      updatedAt: published!.published_at ?? published!.created_at,
    }
  })
}

type Facts = Awaited<ReturnType<typeof repo.takeFacts>>
type TakeFact = Facts['takes'][number]

function namingFacts(
  pack: repo.PackJoined,
  take: TakeFact,
  facts: Facts,
  kind: ItemKind,
  index: number,
  count: number,
  regionName: string | null,
): NamingFacts {
  return {
    devices: facts.sources.filter((s) => s.take_id === take.id).map((s) => ({ name: s.name, state: s.state })),
    tags: facts.tags.filter((t) => t.take_id === take.id).map((t) => t.tag),
    title: take.title,
    filename: take.filename,
    sessionTitle: take.session_title,
    sessionDate: take.session_date,
    takeId: take.id,
    kind,
    packName: pack.name,
    regionName,
    index,
    count,
  }
}

const sourceLabel = (s: { name: string; state: string }) => (s.state ? `${s.name} (${s.state})` : s.name)

function timeReferenceOf(take: TakeFact): number | null {
  if (!take.analysis_json) return null
  const a = JSON.parse(take.analysis_json) as Analysis
  return a.metadata?.bext?.timeReference ?? null
}

const rangeSeconds = (
  row: Pick<PackItemRow, 'start_seconds' | 'end_seconds'>,
  take: { duration_seconds: number | null },
) => (row.end_seconds ?? take.duration_seconds ?? 0) - (row.start_seconds ?? 0)

/** The by-kind folder of a take: its first source device's kind; takes logged without a device go to "other". */
function kindFolder(facts: Facts, takeId: number): string {
  return facts.sources.find((s) => s.take_id === takeId)?.kind ?? 'other'
}

/** Everything about a pack's items in order: facts, names and render specs. `opts` previews another name limit or layout. */
export async function itemSpecs(
  db: Db,
  pack: repo.PackJoined,
  rows: PackItemRow[],
  opts: { maxNameLength?: number | null; layout?: 'flat' | 'by-kind' } = {},
) {
  const [facts, regions] = await Promise.all([
    repo.takeFacts(db, [...new Set(rows.map((r) => r.take_id))]),
    repo.regionNames(db, [...new Set(rows.flatMap((r) => (r.region_id === null ? [] : [r.region_id])))]),
  ])
  const packSettings = pack.settings_json ? RenderSettingsPatch.parse(JSON.parse(pack.settings_json)) : null
  const profile = effectiveSettings(packSettings).profile ?? null
  const maxLength = opts.maxNameLength !== undefined ? opts.maxNameLength : (profile?.maxNameLength ?? null)
  const layout = opts.layout ?? profile?.layout ?? 'flat'
  const entries = rows.map((row, i) => {
    const take = facts.takes.find((t) => t.id === row.take_id)!
    const regionName = row.region_id === null ? null : (regions.get(row.region_id) ?? null)
    return { row, take, naming: namingFacts(pack, take, facts, row.kind as ItemKind, i + 1, rows.length, regionName) }
  })
  const names = itemNames(
    pack.naming_template,
    entries.map((e) => ({ name: e.row.name, facts: e.naming })),
    { maxLength },
  )
  return entries.map((e, i) => {
    const settings = effectiveSettings(packSettings, parsePatch(e.row.settings_json))
    const sourceLevels =
      e.row.source_measured_from === null
        ? null
        : { integratedLufs: e.row.source_lufs, truePeakDbtp: e.row.source_true_peak_dbtp }
    const spec: ItemSpec = {
      itemId: e.row.id,
      position: i + 1,
      takeId: e.take.id,
      regionId: e.row.region_id,
      regionName: e.naming.regionName,
      startSeconds: e.row.start_seconds,
      endSeconds: e.row.end_seconds,
      kind: e.row.kind as ItemKind,
      settings,
      outputName: names[i].name,
      fileName: `${names[i].name}.wav`,
      fullName: names[i].full,
      folder: layout === 'by-kind' ? kindFolder(facts, e.take.id) : null,
      sourceFile: e.take.filename,
      audioPath: e.take.audio_path,
      sourceLevels,
      sampleRate: e.take.sample_rate,
      channels: e.take.channels,
      takeDurationSeconds: e.take.duration_seconds ?? 0,
      title: e.row.name ?? e.take.title,
      description: e.take.description,
      sources: e.naming.devices.map(sourceLabel),
      tags: e.naming.tags,
      sourceTimeReference: timeReferenceOf(e.take),
      modulation: parsePatch(e.row.settings_json)?.modulation ?? null,
    }
    return { ...e, spec }
  })
}

/** The output names `template` would give the pack's items (explicit names stay), for the live preview. */
export async function namingPreview(
  ctx: AppContext,
  packId: number,
  q: { template: string; maxNameLength?: number; layout?: 'flat' | 'by-kind' },
): Promise<NamingPreview> {
  const pack = await managedPack(ctx.db, packId)
  const specs = await itemSpecs(ctx.db, { ...pack, naming_template: q.template }, await repo.itemsOf(ctx.db, packId), {
    maxNameLength: q.maxNameLength,
    layout: q.layout,
  })
  return {
    names: specs.map((s) => ({
      itemId: s.row.id,
      outputName: s.spec.outputName,
      fileName: s.spec.fileName,
      fullName: s.spec.fullName ?? s.spec.outputName,
      folder: s.spec.folder ?? null,
    })),
  }
}

/** `publishedOnly`: rendered numbers from published builds only (what producers may see). */
export async function itemsToApi(
  db: Db,
  pack: repo.PackJoined,
  rows: PackItemRow[],
  publishedOnly = false,
): Promise<PackItem[]> {
  const specs = await itemSpecs(db, pack, rows)
  const rendered = await repo.latestRendered(
    db,
    rows.map((r) => r.id),
    publishedOnly,
  )
  return specs.map(({ row, take, naming, spec }) => {
    const r = rendered.find((x) => x.item_id === row.id)
    const plan = spec.sourceLevels ? planGain(spec.sourceLevels, spec.settings) : null
    return {
      id: row.id,
      position: spec.position,
      takeId: take.id,
      regionId: row.region_id,
      regionName: naming.regionName,
      take: {
        id: take.id,
        title: take.title,
        filename: take.filename,
        sessionTitle: take.session_title,
        status: take.status,
        durationSeconds: take.duration_seconds,
        sampleRate: take.sample_rate,
        channels: take.channels,
        bitsPerSample: take.bits_per_sample,
        sources: naming.devices,
        tags: naming.tags,
      },
      startSeconds: row.start_seconds,
      endSeconds: row.end_seconds,
      durationSeconds: rangeSeconds(row, take),
      kind: spec.kind,
      name: row.name,
      outputName: spec.outputName,
      fileName: spec.fileName,
      folder: spec.folder ?? null,
      fullName: spec.fullName,
      settings: parsePatch(row.settings_json),
      effectiveSettings: spec.settings,
      source: {
        integratedLufs: round2(row.source_lufs),
        truePeakDbtp: round2(row.source_true_peak_dbtp),
        loudnessRangeLu: round2(row.source_lra_lu),
        measuredFrom: row.source_measured_from === 'take' ? 'take' : 'range',
        expectedGainDb: plan ? round2(plan.gainDb) : null,
        expectedUnderTargetDb:
          plan && plan.limited && plan.wantedGainDb !== null ? round2(plan.wantedGainDb - plan.gainDb) : null,
      },
      rendered: r ? renderedOf(r, { id: r.build_id, version: r.version }) : null,
    }
  })
}

export async function packDetail(ctx: AppContext, user: User, pack: repo.PackJoined): Promise<PackDetail> {
  const [api] = await packsToApi(ctx, user, [pack])
  if (!managesPacks(user)) {
    const published = await newestPublished(ctx.db, pack.id)
    if (!published) throw packNotFound()
    return publishedDetail(ctx.db, api, published)
  }
  return { ...api, items: await itemsToApi(ctx.db, pack, await repo.itemsOf(ctx.db, pack.id)) }
}

// ---- packs ----

export async function createPack(ctx: AppContext, user: User, body: CreatePackBody): Promise<PackDetail> {
  const licence =
    body.licenceText ?? LICENCE_TEMPLATES.find((t) => t.key === (body.licenceTemplate ?? 'royalty-free'))!.text
  const settings = RenderSettings.parse({ ...DEFAULT_RENDER_SETTINGS, ...body.settings })
  const { id } = await repo.insertPack(ctx.db, {
    name: body.name,
    description: body.description,
    licence_text: licence,
    naming_template: body.namingTemplate,
    settings_json: JSON.stringify(settings),
    created_by: user.id,
  })
  return packDetail(ctx, user, (await repo.findPack(ctx.db, id))!)
}

export async function updatePackFields(
  ctx: AppContext,
  user: User,
  id: number,
  body: UpdatePackBody,
): Promise<PackDetail> {
  const pack = await managedPack(ctx.db, id)
  const settings = body.settings
    ? RenderSettings.parse({ ...parseSettings(pack.settings_json), ...body.settings })
    : null
  await repo.updatePack(ctx.db, id, {
    ...(body.name !== undefined ? { name: body.name } : {}),
    ...(body.description !== undefined ? { description: body.description } : {}),
    ...(body.licenceText !== undefined ? { licence_text: body.licenceText } : {}),
    ...(body.namingTemplate !== undefined ? { naming_template: body.namingTemplate } : {}),
    ...(settings ? { settings_json: JSON.stringify(settings) } : {}),
  })
  return packDetail(ctx, user, (await repo.findPack(ctx.db, id))!)
}

// ---- items ----

interface RangeInput {
  startSeconds: number | null
  endSeconds: number | null
}

/** Checks the take is measured and the range lies inside it; returns the stored range (null for the take's own ends). */
function checkRange(take: TakeFact, r: RangeInput, label = ''): RangeInput {
  const at = label ? `${label}: ` : ''
  if (take.status !== 'ready' || take.duration_seconds === null) {
    throw new AppError(
      409,
      'TAKE_NOT_READY',
      `${at}take ${take.id} is ${take.status}; only measured takes go into packs`,
      { takeId: take.id },
    )
  }
  const duration = take.duration_seconds
  const start = r.startSeconds ?? 0
  const end = r.endSeconds ?? duration
  const bad = (msg: string) =>
    new AppError(400, 'RANGE_INVALID', `${at}${msg}`, { takeId: take.id, durationSeconds: duration })
  if (start >= duration)
    throw bad(`the start (${start} s) is not inside take ${take.id}, which lasts ${duration.toFixed(3)} s`)
  if (end > duration + 1e-6)
    throw bad(`the end (${end} s) is past the end of take ${take.id}, which lasts ${duration.toFixed(3)} s`)
  // The schema checks ranges given with both ends; this covers one end against the take's length.
  if (!longEnough(start, end))
    throw bad(`the range must be at least ${MIN_SELECTION_MS} ms long and end after it starts`)
  const whole = start === 0 && Math.abs(end - duration) < 1e-6
  if (whole) return { startSeconds: null, endSeconds: null }
  return {
    startSeconds: r.startSeconds,
    endSeconds: r.endSeconds !== null && r.endSeconds >= duration ? null : r.endSeconds,
  }
}

/** Source levels of a range: the take's own measurement for the whole take, else a measuring pass over the range. */
async function sourceLevels(ctx: AppContext, who: string, take: TakeFact, r: RangeInput, label = '') {
  if (r.startSeconds === null && r.endSeconds === null && take.true_peak_dbtp !== null) {
    return {
      source_lufs: take.integrated_lufs,
      source_true_peak_dbtp: take.true_peak_dbtp,
      source_lra_lu: take.loudness_range_lu,
      source_measured_from: 'take',
    }
  }
  const path = await ctx.storage.local(take.audio_path)
  try {
    // On a worker thread: a long range takes seconds to measure.
    const m = await ctx.heavy.measure(who, path, r.startSeconds, r.endSeconds)
    return {
      source_lufs: m.integratedLufs,
      source_true_peak_dbtp: m.truePeakDbtp,
      source_lra_lu: m.loudnessRangeLu,
      source_measured_from: 'range',
    }
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'ENOENT') {
      throw new AppError(
        409,
        'TAKE_AUDIO_MISSING',
        `${label ? `${label}: ` : ''}take ${take.id}'s audio file is missing`,
        { takeId: take.id },
      )
    }
    throw err
  }
}

/** An item's region must belong to its take (checked even when the range is given too); a missing end is filled from it. */
async function resolveRegion(db: Db, body: AddItemBody, label: string): Promise<AddItemBody> {
  if (body.regionId === undefined) return body
  // Checked even when the range is given: an item's region must belong to its take.
  const region = await repo.findRegionRange(db, body.regionId)
  if (!region || region.take_id !== body.takeId) {
    throw new AppError(
      400,
      'REGION_NOT_FOUND',
      `${label ? `${label}: ` : ''}take ${body.takeId} has no region ${body.regionId}`,
    )
  }
  return {
    ...body,
    startSeconds: body.startSeconds ?? region.start_seconds,
    endSeconds: body.endSeconds ?? region.end_seconds,
  }
}

/** Adds items in order, all or none: each take must be measured and each range inside its take. */
export async function addItems(
  ctx: AppContext,
  user: User,
  packId: number,
  bodies: AddItemBody[],
): Promise<PackItem[]> {
  const pack = await managedPack(ctx.db, packId)
  const facts = await repo.takeFacts(ctx.db, [...new Set(bodies.map((b) => b.takeId))])
  const prepared: { b: AddItemBody; range: RangeInput; levels: Awaited<ReturnType<typeof sourceLevels>> }[] = []
  for (const [i, raw] of bodies.entries()) {
    const label = bodies.length > 1 ? `items.${i}` : ''
    const take = facts.takes.find((t) => t.id === raw.takeId)
    if (!take)
      throw new AppError(404, 'TAKE_NOT_FOUND', `${label ? `${label}: ` : ''}no take with id ${raw.takeId}`, {
        takeId: raw.takeId,
      })
    const b = await resolveRegion(ctx.db, raw, label)
    const range = checkRange(take, { startSeconds: b.startSeconds ?? null, endSeconds: b.endSeconds ?? null }, label)
    prepared.push({ b, range, levels: await sourceLevels(ctx, `user:${user.id}`, take, range, label) })
  }
  const ids = await ctx.db.transaction().execute(async (trx) => {
    let position = await repo.nextPosition(trx, packId)
    const out: number[] = []
    for (const { b, range, levels } of prepared) {
      const row = await repo.insertItem(trx, {
        pack_id: packId,
        take_id: b.takeId,
        region_id: b.regionId ?? null,
        position: position++,
        start_seconds: range.startSeconds,
        end_seconds: range.endSeconds,
        name: b.name?.trim() ? b.name.trim() : null,
        kind: b.kind,
        settings_json: b.settings && Object.keys(b.settings).length ? JSON.stringify(b.settings) : null,
        created_by: user.id,
        ...levels,
      })
      out.push(row.id)
    }
    await repo.touchPack(trx, packId)
    return out
  })
  const all = await itemsToApi(ctx.db, pack, await repo.itemsOf(ctx.db, packId))
  return ids.map((id) => all.find((i) => i.id === id)!)
}

export async function updateItem(
  ctx: AppContext,
  packId: number,
  itemId: number,
  body: UpdateItemBody,
  who: string,
): Promise<PackItem> {
  const pack = await managedPack(ctx.db, packId)
  const row = await repo.findItem(ctx.db, packId, itemId)
  if (!row) throw itemNotFound()
  const rangeChanged = body.startSeconds !== undefined || body.endSeconds !== undefined
  let patch: Parameters<typeof repo.updateItem>[2] = {}
  if (rangeChanged) {
    const facts = await repo.takeFacts(ctx.db, [row.take_id])
    const take = facts.takes[0]
    const range = checkRange(take, {
      startSeconds: body.startSeconds !== undefined ? body.startSeconds : row.start_seconds,
      endSeconds: body.endSeconds !== undefined ? body.endSeconds : row.end_seconds,
    })
    patch = {
      start_seconds: range.startSeconds,
      end_seconds: range.endSeconds,
      ...(await sourceLevels(ctx, who, take, range)),
    }
  }
  if (body.name !== undefined) patch.name = body.name?.trim() ? body.name.trim() : null
  if (body.kind !== undefined) patch.kind = body.kind
  if (body.settings !== undefined)
    patch.settings_json = body.settings && Object.keys(body.settings).length ? JSON.stringify(body.settings) : null
  await repo.updateItem(ctx.db, itemId, patch)
  await repo.touchPack(ctx.db, packId)
  const all = await itemsToApi(ctx.db, pack, await repo.itemsOf(ctx.db, packId))
  return all.find((i) => i.id === itemId)!
}

export async function removeItem(ctx: AppContext, packId: number, itemId: number): Promise<void> {
  await managedPack(ctx.db, packId)
  const row = await repo.findItem(ctx.db, packId, itemId)
  if (!row) throw itemNotFound()
  await ctx.db.transaction().execute(async (trx) => {
    await repo.deleteItem(trx, itemId)
    const rest = await repo.itemsOf(trx, packId)
    await repo.setPositions(
      trx,
      packId,
      rest.map((r) => r.id),
    )
    await repo.touchPack(trx, packId)
  })
}

/** Sets the order; itemIds must name every item of the pack exactly once. */
export async function reorderItems(ctx: AppContext, packId: number, itemIds: number[]): Promise<PackItem[]> {
  const pack = await managedPack(ctx.db, packId)
  const rows = await repo.itemsOf(ctx.db, packId)
  const have = new Set(rows.map((r) => r.id))
  const given = new Set(itemIds)
  const missing = rows.filter((r) => !given.has(r.id)).map((r) => r.id)
  const unknown = itemIds.filter((id) => !have.has(id))
  if (given.size !== itemIds.length || missing.length || unknown.length) {
    throw new AppError(400, 'ORDER_INVALID', 'itemIds must list every item of the pack exactly once', {
      missing,
      unknown,
    })
  }
  await ctx.db.transaction().execute(async (trx) => {
    await repo.setPositions(trx, packId, itemIds)
    await repo.touchPack(trx, packId)
  })
  return itemsToApi(ctx.db, pack, await repo.itemsOf(ctx.db, packId))
}

// ---- quick export ----

const SETTING_KEYS = [
  'normalize',
  'loudnessTargetLufs',
  'peakTargetDbtp',
  'truePeakCeilingDbtp',
  'bitDepth',
  'fadeInMs',
  'fadeOutMs',
] as const

/** A take or a range of one as a one-item spec, with a pack's settings and naming (or the defaults), any setting overridden. */
export async function exportSpec(ctx: AppContext, takeId: number, q: QuickExportQuery, who: string): Promise<ItemSpec> {
  let pack: repo.PackJoined = q.packId
    ? await managedPack(ctx.db, q.packId)
    : {
        id: 0,
        name: 'export',
        description: '',
        licence_text: '',
        naming_template: DEFAULT_NAMING_TEMPLATE,
        settings_json: JSON.stringify(DEFAULT_RENDER_SETTINGS),
        created_by: null,
        created_at: '',
        updated_at: '',
        creator_name: null,
      }
  const facts = await repo.takeFacts(ctx.db, [takeId])
  const take = facts.takes[0]
  if (!take) throw new AppError(404, 'TAKE_NOT_FOUND', 'No take with that id')
  const range = checkRange(take, { startSeconds: q.start ?? null, endSeconds: q.end ?? null })
  if (q.preset !== undefined) {
    const settings = {
      ...parseSettings(pack.settings_json),
      profile: q.preset === 'none' ? null : presetProfile(q.preset),
    }
    pack = { ...pack, settings_json: JSON.stringify(settings) }
  }
  const overrides: RenderSettingsPatch = {}
  for (const k of SETTING_KEYS) if (q[k] !== undefined) (overrides as Record<string, unknown>)[k] = q[k]
  const row: PackItemRow = {
    id: 0,
    pack_id: pack.id,
    take_id: take.id,
    region_id: null,
    position: 1,
    start_seconds: range.startSeconds,
    end_seconds: range.endSeconds,
    name: q.name?.trim() ? q.name.trim() : null,
    kind: q.kind ?? 'one-shot',
    settings_json: Object.keys(overrides).length ? JSON.stringify(overrides) : null,
    created_by: null,
    created_at: '',
    updated_at: '',
    ...(await sourceLevels(ctx, who, take, range)),
  }
  const [{ spec }] = await itemSpecs(ctx.db, pack, [row])
  const long = tooLongItem([spec])
  if (long)
    throw new AppError(400, 'ITEM_TOO_LONG', tooLongText(long), {
      seconds: round2(long.seconds),
      maxSeconds: long.maxSeconds,
    })
  return { ...spec, itemId: null }
}
