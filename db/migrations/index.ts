// Every migration, in order. A static list (rather than a folder scan with
// dynamic import) works the same under tsx, vitest and a bundler; the test
// tests/api/migrations.test.ts fails if a file in this folder is missing here.
import type { Migration } from 'kysely'
import * as foundation from './20261201120000_foundation'

export const migrations: Record<string, Migration> = {
  '20261201120000_foundation': foundation,
}
