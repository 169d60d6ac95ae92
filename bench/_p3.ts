import SQLite from 'better-sqlite3'
const db = new SQLite((process.env.DB ?? '/work/wt/search2/.bench-dbs/library-1000000.sqlite'), { readonly: true })
db.pragma('mmap_size = ' + (process.env.MMAP ?? '1073741824')); console.error(db.pragma('mmap_size')); db.pragma('cache_size = -65536')
const s = process.argv[2]
for (const r of db.prepare('EXPLAIN QUERY PLAN ' + s).all() as any[]) console.log(r.id, r.parent, r.detail)
const t0 = performance.now(); const rows = db.prepare(s).all(); console.log((performance.now()-t0).toFixed(1), rows.length)
const t1 = performance.now(); db.prepare(s).all(); console.log((performance.now()-t1).toFixed(1))
