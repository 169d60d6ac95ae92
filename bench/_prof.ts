import SQLite from 'better-sqlite3'
import { Kysely, SqliteDialect } from 'kysely'
import { searchTakeRows } from '../server/takes/takes.search'
import { TakeQuery } from '../shared/schemas/takes'
const sqlite = new SQLite('/work/wt/search2/.bench-dbs/library-1000000.sqlite', { readonly: true })
sqlite.pragma('mmap_size = 1073741824'); sqlite.pragma('cache_size = -65536')
const log: string[] = []
const db = new Kysely<any>({ dialect: new SqliteDialect({ database: sqlite }), log: (e) => { if (e.level === 'query') log.push(`${e.queryDurationMillis.toFixed(1)} ms  ${e.query.sql.replace(/\s+/g, ' ').slice(0, 400)}`) } })
const qs = process.argv[2]
const q = TakeQuery.parse(Object.fromEntries(new URLSearchParams(qs)))
for (let i = 0; i < 3; i++) { log.length = 0; const t = performance.now(); const r = await searchTakeRows(db as any, q); console.log('total', (performance.now() - t).toFixed(1), r.total, r.totalCapped) }
console.log(log.join('\n'))
