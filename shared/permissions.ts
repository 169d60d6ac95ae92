// The one role/permission table of the product. The server's `requirePermission`
// middleware and the client's router guard and buttons both read it, so the
// two sides can never disagree about who may do what.

export const ROLES = ['admin', 'recordist', 'designer', 'producer', 'collaborator'] as const
export type Role = (typeof ROLES)[number]

export const ROLE_LABELS: Record<Role, string> = {
  admin: 'Admin',
  recordist: 'Recordist',
  designer: 'Sound designer',
  producer: 'Producer',
  collaborator: 'Collaborator',
}

export const PERMISSIONS = {
  /** Read the library: captures, takes, sources, measurements, audio. */
  'library:browse': ['admin', 'recordist', 'designer', 'producer', 'collaborator'],
  /** Write comments and reply. */
  'comments:write': ['admin', 'recordist', 'designer', 'producer', 'collaborator'],
  /** Create and edit capture sessions and upload takes into them. */
  'captures:manage': ['admin', 'recordist'],
  /** Edit metadata of takes one uploaded. */
  'takes:edit-own': ['admin', 'recordist', 'designer'],
  /** Edit and tag any take, bulk edits, regions on any take. */
  'takes:edit-any': ['admin', 'designer'],
  /** The catalogue of source devices. */
  'sources:manage': ['admin', 'designer'],
  /** Add a device to the catalogue (name and kind) where a take is logged; the rest is filled in by 'sources:manage'. */
  'sources:create': ['admin', 'recordist', 'designer'],
  /** Curate packs, render, build, publish, share links. */
  'packs:manage': ['admin', 'designer'],
  /** See published packs and download their published versions. */
  'packs:receive': ['admin', 'designer', 'producer'],
  /** The team, invitations, the outbox and settings. */
  'team:manage': ['admin'],
} as const satisfies Record<string, readonly Role[]>

export type Permission = keyof typeof PERMISSIONS

export function can(role: Role | null | undefined, permission: Permission): boolean {
  if (!role) return false
  return (PERMISSIONS[permission] as readonly Role[]).includes(role)
}

export function permissionsOf(role: Role): Permission[] {
  return (Object.keys(PERMISSIONS) as Permission[]).filter((p) => can(role, p))
}
