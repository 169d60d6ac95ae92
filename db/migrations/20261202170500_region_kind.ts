import { Kysely } from 'kysely'

// What a region is for, when it is an instrument part: 'one-shot', 'loop' or
// 'drone'; null for a plain named range. Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('regions').addColumn('kind', 'text').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('regions').dropColumn('kind').execute()
}
