import { Kysely } from 'kysely'

// Each pack build carries a "what changed" note, written by the designer when
// publishing it and sent to the pack's followers. Frozen in time: imports nothing from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('pack_builds').addColumn('change_note', 'text').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('pack_builds').dropColumn('change_note').execute()
}
