import type { Permission, Role } from '@shared/permissions'

/** The product's areas, in the order of the top navigation. */
export interface Area {
  name: string
  label: string
  path: string
  permission: Permission
}

export const AREAS: Area[] = [
  { name: 'captures', label: 'Captures', path: '/captures', permission: 'library:browse' },
  { name: 'library', label: 'Library', path: '/library', permission: 'library:browse' },
  { name: 'sources', label: 'Sources', path: '/sources', permission: 'library:browse' },
  { name: 'packs', label: 'Packs', path: '/packs', permission: 'packs:receive' },
  { name: 'team', label: 'Team', path: '/team', permission: 'team:manage' },
  { name: 'outbox', label: 'Outbox', path: '/outbox', permission: 'team:manage' },
]

/** Where a role lands after signing in (and on /): the area it works in; roles not named here land on their first area. */
export const HOME_BY_ROLE: Partial<Record<Role, string>> = {
  designer: '/library',
  producer: '/packs',
  collaborator: '/library',
}
