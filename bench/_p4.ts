import SQLite from 'better-sqlite3'
const db = new SQLite('' + (process.env.DB ?? '/work/wt/search2/.bench-dbs/library-1000000.sqlite') + '', { readonly: true })
db.pragma('mmap_size = ' + (process.env.MMAP ?? '1073741824')); db.pragma('cache_size = ' + (process.env.CACHE ?? '-65536'))
console.log('mmap', db.pragma('mmap_size', { simple: true }))
const s = process.argv[2]
const ts: number[] = []
for (let i = 0; i < 12; i++) { const t0 = performance.now(); db.prepare(s).all(); ts.push(performance.now() - t0) }
console.log(ts.map((x) => x.toFixed(0)).join(' '))
