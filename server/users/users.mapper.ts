import type { User } from '@shared/schemas/auth'
import type { TeamMember } from '@shared/schemas/team'
import type { Role } from '@shared/permissions'
import type { UserRow } from '../../db/schema'

export const userRowToUser = (r: UserRow): User => ({ id: r.id, email: r.email, name: r.name, role: r.role as Role })

export const userRowToMember = (r: UserRow): TeamMember => ({
  ...userRowToUser(r),
  active: r.active === 1,
  createdAt: r.created_at,
  lastLoginAt: r.last_login_at,
})
