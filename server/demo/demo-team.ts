import type { Role } from '@shared/permissions'

// An invented team: obviously fictional people on the reserved example.test domain.
export const DEMO_PASSWORD = 'strayfield-demo'

export const DEMO_ACCOUNTS: { email: string; name: string; role: Role }[] = [
  { email: 'admin@example.test', name: 'Ada Quillfeather', role: 'admin' },
  { email: 'recordist@example.test', name: 'Rory Coilwright', role: 'recordist' },
  { email: 'designer@example.test', name: 'Dana Humbucker', role: 'designer' },
  { email: 'producer@example.test', name: 'Pim Loopington', role: 'producer' },
  { email: 'collaborator@example.test', name: 'Cass Earwig', role: 'collaborator' },
]
