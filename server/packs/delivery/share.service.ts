// Share links of a finished build for people without an account.
//
// Download counting (share-ranges.ts): a request is a new download, counted in
// one statement that also checks the link is not revoked, not expired and under
// its limit (else 410), unless it is a later resume of the last counted download
// that did not finish; so a broken download can always be finished, and the
// limit counts whole downloads. A Range the file sender would ignore answers
// 416; HEAD is answered from the rows; nothing counts before the file is known
// to exist.
import { stat } from 'node:fs/promises'
import type { User } from '@shared/schemas/auth'
import { profileSummary, type CreateShareLinkBody, type ShareInfo, type ShareLink } from '@shared/schemas/packs'
import type { AppContext } from '../../core/context'
import { AppError, fileError } from '../../core/errors'
import { sessionSecret } from '../../core/settings'
import { buildNotFound } from '../builds/builds.service'
import { buildFileName } from '../curation/naming'
import * as repo from '../packs.repository'
import { publishedItems, snapshotOf } from '../builds/published'
import { newNonce, shareToken, verifyShareToken } from './share-tokens'
import { isResume, planRange } from './share-ranges'

const secretOf = (ctx: AppContext) => sessionSecret(ctx.db, ctx.config.sessionSecret)

/** A share link expires at most this many days ahead (a year). */
export const MAX_SHARE_DAYS = 365

export const linkNotFound = () => new AppError(404, 'SHARE_LINK_NOT_FOUND', 'No share link with that id')
const shareNotFound = () =>
  new AppError(404, 'SHARE_NOT_FOUND', 'This share link does not exist; check that it was copied whole')

export function linkState(l: repo.ShareLinkJoined, at = new Date().toISOString()): ShareLink['state'] {
  if (l.revoked_at) return 'revoked'
  if (l.expires_at <= at) return 'expired'
  if (l.max_downloads !== null && l.downloads >= l.max_downloads) return 'used-up'
  return 'active'
}

function linkToApi(ctx: AppContext, secret: string, l: repo.ShareLinkJoined): ShareLink {
  const token = shareToken(secret, l.id, l.nonce)
  return {
    id: l.id,
    buildId: l.build_id,
    url: `${ctx.config.publicUrl}/share/${token}`,
    downloadUrl: `${ctx.config.publicUrl}/api/share/${token}/download`,
    token,
    expiresAt: l.expires_at,
    maxDownloads: l.max_downloads,
    downloads: l.downloads,
    revokedAt: l.revoked_at,
    state: linkState(l),
    createdBy: l.created_by && l.creator_name ? { id: l.created_by, name: l.creator_name } : null,
    createdAt: l.created_at,
    lastDownloadAt: l.last_download_at,
  }
}

export async function createShareLink(
  ctx: AppContext,
  user: User,
  buildId: number,
  body: CreateShareLinkBody,
): Promise<ShareLink> {
  const b = await repo.findBuild(ctx.db, buildId)
  if (!b) throw buildNotFound()
  if (b.status !== 'done')
    throw new AppError(409, 'BUILD_NOT_DONE', `Version ${b.version} is ${b.status}; share it once it is done`)
  const expires = new Date(body.expiresAt)
  if (expires.getTime() <= Date.now()) throw new AppError(400, 'EXPIRY_IN_PAST', 'Choose an expiry in the future')
  if (expires.getTime() > Date.now() + MAX_SHARE_DAYS * 24 * 3600 * 1000) {
    throw new AppError(
      400,
      'EXPIRY_TOO_FAR',
      `A share link can last at most ${MAX_SHARE_DAYS} days; choose an earlier expiry`,
      { maxDays: MAX_SHARE_DAYS },
    )
  }
  const { id } = await repo.insertShareLink(ctx.db, {
    build_id: buildId,
    nonce: newNonce(),
    expires_at: expires.toISOString(),
    max_downloads: body.maxDownloads ?? null,
    created_by: user.id,
  })
  return linkToApi(ctx, await secretOf(ctx), (await repo.findShareLink(ctx.db, id))!)
}

export async function listShareLinks(ctx: AppContext, buildId: number): Promise<ShareLink[]> {
  if (!(await repo.findBuild(ctx.db, buildId))) throw buildNotFound()
  const secret = await secretOf(ctx)
  return (await repo.linksOf(ctx.db, buildId)).map((l) => linkToApi(ctx, secret, l))
}

export async function revokeShareLink(ctx: AppContext, id: number): Promise<ShareLink> {
  if (!(await repo.findShareLink(ctx.db, id))) throw linkNotFound()
  await repo.revokeShareLink(ctx.db, id)
  return linkToApi(ctx, await secretOf(ctx), (await repo.findShareLink(ctx.db, id))!)
}

function gone(state: ShareLink['state']): AppError {
  const messages = {
    revoked: ['SHARE_REVOKED', 'This share link was withdrawn by the team that made it'],
    expired: ['SHARE_EXPIRED', 'This share link has expired'],
    'used-up': ['SHARE_USED_UP', 'This share link has been used as many times as it allows'],
  } as const
  const [code, message] = messages[state as keyof typeof messages]
  return new AppError(410, code, message)
}

async function resolve(ctx: AppContext, token: string) {
  const parsed = verifyShareToken(await secretOf(ctx), token)
  if (!parsed) throw shareNotFound()
  const link = await repo.findShareLink(ctx.db, parsed.id)
  if (!link || link.nonce !== parsed.nonce) throw shareNotFound()
  const build = await repo.findBuild(ctx.db, link.build_id)
  if (!build || build.status !== 'done' || !build.zip_path) throw shareNotFound()
  return { link, build }
}

/** What the share page shows: the build as it was frozen (its licence is the LICENSE.txt in the zip) and its items. */
export async function shareInfo(ctx: AppContext, token: string): Promise<ShareInfo> {
  const { link, build } = await resolve(ctx, token)
  const state = linkState(link)
  if (state !== 'active') throw gone(state)
  const snap = snapshotOf(build)
  return {
    packName: snap.pack.name,
    description: snap.pack.description,
    licenceText: snap.pack.licenceText.trim(),
    version: build.version,
    fileName: buildFileName(build.pack_name, build.version),
    sizeBytes: build.size_bytes ?? 0,
    itemCount: build.item_count,
    expiresAt: link.expires_at,
    downloadsLeft: link.max_downloads === null ? null : Math.max(0, link.max_downloads - link.downloads),
    downloadUrl: `/api/share/${token}/download`,
    items: await publishedItems(ctx.db, build, `/api/share/${token}`),
    changeNote: build.change_note,
    format: snap.pack.settings.profile ? profileSummary(snap.pack.settings.profile) : null,
  }
}

/**
 * The build behind a link for one item (audition or download): allowed while the link is active,
 * like its page; never counted against the link's limit (only the whole zip is).
 */
export async function shareItemBuild(ctx: AppContext, token: string): Promise<repo.BuildJoined> {
  const { link, build } = await resolve(ctx, token)
  const state = linkState(link)
  if (state !== 'active') throw gone(state)
  return build
}

/** What a HEAD request is answered with, from the rows alone: nothing counted, no file touched. */
export async function shareHead(ctx: AppContext, token: string): Promise<{ sizeBytes: number; fileName: string }> {
  const { link, build } = await resolve(ctx, token)
  const state = linkState(link)
  if (state !== 'active') throw gone(state)
  return { sizeBytes: build.size_bytes ?? 0, fileName: buildFileName(build.pack_name, build.version) }
}

export interface ShareDownload {
  path: string
  build: repo.BuildJoined
  sizeBytes: number
  /** null: a Range the file sender would ignore or cannot satisfy (answer 416; nothing was counted). */
  range: { start: number; end: number } | null
  /** Records how far this request got (bytes of the file), so only a later resume goes uncounted. */
  served(reachedBytes: number): Promise<void>
}

/**
 * Checks a download through the link and, unless it is a later resume of the last counted
 * download, counts it (see share-ranges.ts); counting happens only once the file is known to exist.
 */
export async function shareDownload(
  ctx: AppContext,
  token: string,
  rangeHeader: string | undefined,
): Promise<ShareDownload> {
  const { link, build } = await resolve(ctx, token)
  const at = new Date().toISOString()
  const state = linkState(link, at)
  if (state === 'revoked' || state === 'expired') throw gone(state)
  const path = await ctx.storage.local(build.zip_path!).catch((err: unknown) => {
    console.error(`[share] build ${build.id}'s zip unreadable: ${(err as Error).message}`)
    throw fileError(err)
  })
  const size = await fileSize(path)
  const plan = planRange(rangeHeader, size)
  const base = { path, build, sizeBytes: size, served: async () => undefined }
  if (plan.kind === 'refuse') return { ...base, range: null }
  const range = plan.kind === 'part' ? { start: plan.start, end: plan.end } : { start: 0, end: size - 1 }
  if (!isResume(range.start, link.open_download_bytes)) {
    if (!(await repo.countDownload(ctx.db, link.id, at, range.start)))
      throw gone(linkState((await repo.findShareLink(ctx.db, link.id))!, at))
  }
  return {
    ...base,
    range,
    served: (reached) => repo.recordDownloadProgress(ctx.db, link.id, reached >= size ? null : reached),
  }
}

/** The zip's size; a missing file is FILE_MISSING, its path only in the server log. */
async function fileSize(path: string): Promise<number> {
  try {
    return (await stat(path)).size
  } catch (err) {
    console.error(`[share] build file unreadable: ${path}: ${(err as Error).message}`)
    throw fileError(err)
  }
}
