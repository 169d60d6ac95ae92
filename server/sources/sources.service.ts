import type { CreateSourceBody, Source, SourceKind, UpdateSourceBody } from '@shared/schemas/sources'
import type { User } from '@shared/schemas/auth'
import type { Db } from '../core/database'
import { AppError, notFound } from '../core/errors'
import { findSourceRow, listSourceRows, statesBySource, usageCount } from './sources.repository'

export async function listSources(db: Db): Promise<Source[]> {
  const [rows, states] = await Promise.all([listSourceRows(db), statesBySource(db)])
  return rows.map((r) => ({
    id: r.id,
    name: r.name,
    kind: r.kind as SourceKind,
    makeModel: r.make_model,
    notes: r.notes,
    createdAt: r.created_at,
    takeCount: Number(r.take_count ?? 0),
    states: states.filter((s) => s.source_id === r.id).map((s) => s.state),
  }))
}

export async function getSource(db: Db, id: number): Promise<Source> {
  const found = (await listSources(db)).find((s) => s.id === id)
  if (!found) throw notFound('source device', 'SOURCE_NOT_FOUND')
  return found
}

/**
 * A device typed where a take is logged is often one the catalogue already has:
 * the same name (case and spacing aside) answers 409 naming it, so the picker
 * can link that one instead of adding a twin.
 */
async function assertNameFree(db: Db, name: string, exceptId?: number) {
  const key = name.trim().replace(/\s+/g, ' ').toLocaleLowerCase()
  const rows = await db.selectFrom('sources').select(['id', 'name']).execute()
  const twin = rows.find((r) => r.id !== exceptId && r.name.trim().replace(/\s+/g, ' ').toLocaleLowerCase() === key)
  if (twin)
    throw new AppError(409, 'SOURCE_EXISTS', `The catalogue already has a device called \u201c${twin.name}\u201d`, {
      sourceId: twin.id,
    })
}

export async function createSource(db: Db, actor: User, body: CreateSourceBody): Promise<Source> {
  await assertNameFree(db, body.name)
  const row = await db
    .insertInto('sources')
    .values({
      name: body.name,
      kind: body.kind,
      make_model: body.makeModel ?? null,
      notes: body.notes ?? null,
      created_by: actor.id,
    })
    .returning('id')
    .executeTakeFirstOrThrow()
  return getSource(db, row.id)
}

export async function updateSource(db: Db, id: number, body: UpdateSourceBody): Promise<Source> {
  if (!(await findSourceRow(db, id))) throw notFound('source device', 'SOURCE_NOT_FOUND')
  if (body.name !== undefined) await assertNameFree(db, body.name, id)
  await db
    .updateTable('sources')
    .set({
      ...(body.name !== undefined && { name: body.name }),
      ...(body.kind !== undefined && { kind: body.kind }),
      ...(body.makeModel !== undefined && { make_model: body.makeModel ?? null }),
      ...(body.notes !== undefined && { notes: body.notes ?? null }),
    })
    .where('id', '=', id)
    .execute()
  return getSource(db, id)
}

export async function deleteSource(db: Db, id: number): Promise<void> {
  const row = await findSourceRow(db, id)
  if (!row) throw notFound('source device', 'SOURCE_NOT_FOUND')
  const used = await usageCount(db, id)
  if (used > 0) {
    throw new AppError(
      409,
      'SOURCE_IN_USE',
      `${row.name} is linked to ${used} take${used === 1 ? '' : 's'}; unlink them first`,
      { takeCount: used },
    )
  }
  await db
    .updateTable('capture_sessions')
    .set({ default_source_id: null })
    .where('default_source_id', '=', id)
    .execute()
  await db.deleteFrom('sources').where('id', '=', id).execute()
}
