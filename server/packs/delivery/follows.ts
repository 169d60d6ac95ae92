// Following a pack: followers are mailed when a new version is published
// (builds.service.ts). Anyone who may see the pack may follow it.
import type { User } from '@shared/schemas/auth'
import type { AppContext } from '../../core/context'
import { visiblePack } from '../curation/packs.service'
import * as repo from '../packs.repository'

export interface FollowState {
  following: boolean
  followerCount: number
}

async function followState(ctx: AppContext, packId: number, userId: number): Promise<FollowState> {
  const [f] = await repo.followInfo(ctx.db, [packId], userId)
  return { following: Number(f?.mine ?? 0) === 1, followerCount: Number(f?.count ?? 0) }
}

/** Starts or stops following a pack the user may see (404 otherwise); answers the state afterwards. */
export async function setFollowing(ctx: AppContext, user: User, packId: number, on: boolean): Promise<FollowState> {
  const pack = await visiblePack(ctx.db, user, packId)
  if (on) await repo.follow(ctx.db, pack.id, user.id)
  else await repo.unfollow(ctx.db, pack.id, user.id)
  return followState(ctx, pack.id, user.id)
}
