// The demo's packs: one published (so a producer signing in finds a pack to
// download) and one draft (so the designer's pack picker has one to add to).
//
// Packs take only measured takes and a build needs its job, so this cannot run
// inside the seed: it runs beside the server once the jobs run, waits for its
// takes to be measured, then goes the way a designer does (create, add items,
// ask for a build, publish once it is done), through the same services and the
// same build job. The HTTP server does not wait for it.
//
// Idempotent across restarts: each step looks first for what an earlier start
// left (a pack of that name, a build queued, running or done), and the finished
// state is kept in `settings`, so a second start, or a pack renamed later, never
// makes a second pack.
import type { User } from '@shared/schemas/auth'
import type { Role } from '@shared/permissions'
import { AddItemBody, CreatePackBody } from '@shared/schemas/packs'
import type { AppContext } from '../core/context'
import { getSetting, setSetting } from '../core/settings'
import { addItems, createPack } from '../packs/curation/packs.service'
import { listBuilds, publishBuild, requestBuild } from '../packs/builds/builds.service'
import { DEMO_ACCOUNTS } from './demo-team'

/** The settings key that says the demo's packs are in place. */
export const DEMO_PACKS_SETTING = 'demo_packs'

interface DemoItem {
  file: string
  /** A region of the take by name; else the range, else the whole take. */
  region?: string
  range?: [number, number]
  kind: AddItemBody['kind']
}

interface DemoPack {
  body: CreatePackBody
  items: DemoItem[]
  /** The "what changed" note it is published with; absent: left a draft. */
  publishNote?: string
}

export const DEMO_PACKS: DemoPack[] = [
  {
    body: CreatePackBody.parse({
      name: 'Bench hum beds',
      description:
        'Steady mains hum from the workshop bench sweep, cut to loop: a doorbell transformer on 50 Hz, a desk fan on a 60 Hz supply and the room tone of an idle workstation.',
      settings: { loudnessTargetLufs: -20 },
    }),
    items: [
      { file: 'T001_transformer_hum.wav', region: 'Steady bed', kind: 'loop' },
      { file: 'T002_fan_hum_60.wav', range: [2, 14], kind: 'loop' },
      { file: 'T006_room_tone.wav', range: [5, 20], kind: 'loop' },
    ],
    publishNote: 'First version: three hum beds from the workshop bench sweep.',
  },
  {
    body: CreatePackBody.parse({
      name: 'Whine and burst one-shots',
      description: 'Display whine and two-way radio bursts, still being trimmed.',
    }),
    items: [
      { file: 'T003_monitor_whine.wav', region: 'Usable whine', kind: 'one-shot' },
      { file: 'T004_radio_bursts.wav', region: 'Three clean bursts', kind: 'one-shot' },
    ],
  },
]

const POLL_MS = 200

export interface DemoPacksRun {
  /** Settles when the packs are in place, or the run gave up or was stopped (it never rejects). */
  done: Promise<void>
  stop(): Promise<void>
}

/** Starts bringing the demo's packs into place beside the running server. */
export function startDemoPacks(ctx: AppContext): DemoPacksRun {
  const abort = new AbortController()
  const done = ensureDemoPacks(ctx, abort.signal).catch((err: unknown) => {
    if (!abort.signal.aborted) console.error('[demo] could not put the demo packs in place', err)
  })
  return {
    done,
    async stop() {
      abort.abort()
      await done
    },
  }
}

async function ensureDemoPacks(ctx: AppContext, signal: AbortSignal): Promise<void> {
  if ((await getSetting(ctx.db, DEMO_PACKS_SETTING)) === 'done') return
  const designer = await demoDesigner(ctx)
  if (!designer) return
  // The published pack first: it is what a producer signing in looks for.
  const started = Date.now()
  const s = (ms: number) => `${(ms / 1000).toFixed(1)} s`
  for (const p of DEMO_PACKS) {
    const packId = await makePack(ctx, designer, p, signal)
    if (packId === null) return
    if (!p.publishNote) continue
    const made = Date.now()
    if (!(await publishOnce(ctx, designer, packId, p.publishNote, signal))) return
    console.log(
      `[demo] "${p.body.name}" published ${s(Date.now() - started)} after the jobs started (takes measured: ${s(made - started)}, build: ${s(Date.now() - made)})`,
    )
  }
  await setSetting(ctx.db, DEMO_PACKS_SETTING, 'done')
}

async function demoDesigner(ctx: AppContext): Promise<User | null> {
  const email = DEMO_ACCOUNTS.find((a) => a.role === 'designer')!.email
  const r = await ctx.db
    .selectFrom('users')
    .select(['id', 'email', 'name', 'role'])
    .where('email', '=', email)
    .executeTakeFirst()
  return r ? { id: r.id, email: r.email, name: r.name, role: r.role as Role } : null
}

async function findPackId(ctx: AppContext, name: string): Promise<number | null> {
  const r = await ctx.db.selectFrom('packs').select('id').where('name', '=', name).orderBy('id').executeTakeFirst()
  return r?.id ?? null
}

/**
 * The pack as an earlier start left it, or made now: waits for its takes to be measured, then creates
 * it and adds its items (also to a pack of that name a stopped start left empty); null when a take
 * failed or the run was stopped.
 */
async function makePack(ctx: AppContext, designer: User, p: DemoPack, signal: AbortSignal): Promise<number | null> {
  const found = await findPackId(ctx, p.body.name)
  if (found !== null) {
    const item = await ctx.db.selectFrom('pack_items').select('id').where('pack_id', '=', found).executeTakeFirst()
    if (item) return found
  }
  const takes = await measuredTakes(ctx, [...new Set(p.items.map((i) => i.file))], signal)
  if (!takes) return null
  const items: AddItemBody[] = []
  for (const it of p.items) {
    const takeId = takes.get(it.file)!
    const region = it.region
      ? await ctx.db
          .selectFrom('regions')
          .select('id')
          .where('take_id', '=', takeId)
          .where('name', '=', it.region)
          .executeTakeFirst()
      : undefined
    items.push(
      AddItemBody.parse({
        takeId,
        kind: it.kind,
        ...(region ? { regionId: region.id } : {}),
        ...(it.range ? { startSeconds: it.range[0], endSeconds: it.range[1] } : {}),
      }),
    )
  }
  if (signal.aborted) return null
  const packId = found ?? (await createPack(ctx, designer, p.body)).id
  await addItems(ctx, designer, packId, items)
  return packId
}

/** The demo takes by file name once all are measured; null when one failed or is missing, or the run was stopped. */
async function measuredTakes(
  ctx: AppContext,
  files: string[],
  signal: AbortSignal,
): Promise<Map<string, number> | null> {
  for (;;) {
    const rows = await ctx.db
      .selectFrom('takes')
      .select(['id', 'filename', 'status'])
      .where('filename', 'in', files)
      .execute()
    if (rows.length < files.length || rows.some((r) => r.status === 'failed')) return null
    if (rows.every((r) => r.status === 'ready')) return new Map(rows.map((r) => [r.filename, r.id]))
    if (!(await pause(signal))) return null
  }
}

/** Builds the pack through its job and publishes the build; true once a version is published. */
async function publishOnce(
  ctx: AppContext,
  designer: User,
  packId: number,
  note: string,
  signal: AbortSignal,
): Promise<boolean> {
  for (;;) {
    const builds = await listBuilds(ctx, designer, packId)
    if (builds.some((b) => b.publishedAt)) return true
    const done = builds.find((b) => b.status === 'done')
    if (done) {
      await publishBuild(ctx, designer, done.id, note)
      return true
    }
    if (builds.length && builds.every((b) => b.status === 'failed')) return false
    if (!builds.length) await requestBuild(ctx, designer, packId)
    if (!(await pause(signal))) return false
  }
}

/** Waits a moment; false when the run was stopped. */
function pause(signal: AbortSignal): Promise<boolean> {
  if (signal.aborted) return Promise.resolve(false)
  return new Promise((resolve) => {
    const t = setTimeout(() => {
      signal.removeEventListener('abort', onAbort)
      resolve(true)
    }, POLL_MS)
    const onAbort = () => {
      clearTimeout(t)
      resolve(false)
    }
    signal.addEventListener('abort', onAbort, { once: true })
  })
}
