import { Kysely } from 'kysely'

// Library search at a million takes, second step. A page sorted by a column
// walks that column's index and checks take after take; the checks on the
// take's own numbers were one seek each into `takes_by_id`. When the sort
// order and a filter pull apart (quiet takes first by true peak, but only
// loud ones wanted) the walk passes a hundred thousand takes and the seeks
// dominate. Each sort index now carries the filtered columns after the sort
// column and the id, so those checks read the entry the walk is on. The id
// comes second so ties in the sort column still list in id order, with no
// sort step. Costs about 45 bytes more per take per index.
// Frozen in time: imports nothing from the app.

const FILTERED = [
  'status',
  'hum_hz',
  'sample_rate',
  'channels',
  'session_id',
  'uploader_id',
  'duration_seconds',
  'integrated_lufs',
  'true_peak_dbtp',
  'loudness_range_lu',
]
const SORTS = [
  'created_at',
  'title',
  'filename',
  'duration_seconds',
  'sample_rate',
  'channels',
  'integrated_lufs',
  'true_peak_dbtp',
  'loudness_range_lu',
  'sample_peak_dbfs',
  'noise_floor_dbfs',
  'hum_hz',
  'status',
]

export async function up(db: Kysely<any>): Promise<void> {
  for (const col of SORTS) {
    await db.schema.dropIndex(`takes_${col}`).execute()
    const rest = FILTERED.filter((c) => c !== col)
    await db.schema
      .createIndex(`takes_${col}`)
      .on('takes')
      .columns([col, 'id', ...rest])
      .execute()
  }
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const col of SORTS) {
    await db.schema.dropIndex(`takes_${col}`).execute()
    await db.schema.createIndex(`takes_${col}`).on('takes').column(col).execute()
  }
}
