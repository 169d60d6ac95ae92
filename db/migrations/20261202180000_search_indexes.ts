import { Kysely } from 'kysely'

// Library search at a million takes. A take row is wide (it holds its whole
// analysis), so the search never reads rows to decide: it walks one sort
// column's index and checks each take's measurements in `takes_by_id`, a
// narrow covering index keyed by take id (one seek per take, about 150 bytes
// an entry). That replaces `takes_facets`, which was keyed by status and so
// could only be scanned whole. The sort columns that had no index get one, so
// every sort walks an index instead of sorting the library.
// Frozen in time: imports nothing from the app.

const BY_ID = [
  'id',
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
  'sample_peak_dbfs',
  'noise_floor_dbfs',
  'created_at',
  'title',
  'filename',
]
const SORTS = ['filename', 'channels', 'sample_peak_dbfs', 'noise_floor_dbfs']

const FACETS = BY_ID.slice(1)

export async function up(db: Kysely<any>): Promise<void> {
  await db.schema.dropIndex('takes_facets').execute()
  await db.schema.createIndex('takes_by_id').on('takes').columns(BY_ID).execute()
  for (const col of SORTS) await db.schema.createIndex(`takes_${col}`).on('takes').column(col).execute()
}

export async function down(db: Kysely<any>): Promise<void> {
  for (const col of SORTS) await db.schema.dropIndex(`takes_${col}`).execute()
  await db.schema.dropIndex('takes_by_id').execute()
  await db.schema.createIndex('takes_facets').on('takes').columns(FACETS).execute()
}
