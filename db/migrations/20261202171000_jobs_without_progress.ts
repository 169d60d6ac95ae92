import { Kysely } from 'kysely'

// A job's progress lives in the row the API reads (the take, the pack build), written by the job
// as it runs; the copy on the job row was written and never read. Frozen in time: imports nothing
// from the app.
export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.alterTable('jobs').dropColumn('progress').execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  await db.schema
    .alterTable('jobs')
    .addColumn('progress', 'real', (c) => c.notNull().defaultTo(0))
    .execute()
}
