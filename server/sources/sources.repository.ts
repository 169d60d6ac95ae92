import type { Db } from '../core/database'
import type { SourceRow } from '../../db/schema'
import { visibleTake } from '../takes/takes.removal'

export const listSourceRows = (db: Db) =>
  db
    .selectFrom('sources')
    .selectAll('sources')
    // Takes in the Removed list do not count.
    .select((eb) =>
      eb
        .selectFrom('take_sources')
        .whereRef('take_sources.source_id', '=', 'sources.id')
        .where(visibleTake('take_sources.take_id'))
        .select(eb.fn.countAll<number>().as('n'))
        .as('take_count'),
    )
    .orderBy('kind')
    .orderBy('name')
    .execute()

export const findSourceRow = (db: Db, id: number): Promise<SourceRow | undefined> =>
  db.selectFrom('sources').selectAll().where('id', '=', id).executeTakeFirst()

/** Operating states per device, most used first. */
export const statesBySource = (db: Db) =>
  db
    .selectFrom('take_sources')
    .select((eb) => ['source_id', 'state', eb.fn.countAll<number>().as('n')])
    .where('state', '!=', '')
    .groupBy(['source_id', 'state'])
    .orderBy('n', 'desc')
    .execute()

export const usageCount = async (db: Db, id: number) =>
  Number(
    (
      await db
        .selectFrom('take_sources')
        .select((eb) => eb.fn.countAll<number>().as('n'))
        .where('source_id', '=', id)
        .executeTakeFirstOrThrow()
    ).n,
  )
