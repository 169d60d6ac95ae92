import SQLite from 'better-sqlite3'
const db = new SQLite('/work/wt/search2/.bench-dbs/library-1000000.sqlite', { readonly: true })
db.pragma('mmap_size = 1073741824'); db.pragma('cache_size = -65536')
const t = (label: string, s: string, ...a: any[]) => { for (let i = 0; i < 3; i++) { const t0 = performance.now(); const r = db.prepare(s).all(...a); if (i == 2) console.log(label, (performance.now() - t0).toFixed(1), JSON.stringify(r).slice(0, 100)) } }
t('fts count', `SELECT count(*) n FROM take_fts WHERE take_fts MATCH ?`, '"whine"*')
t('display count', `SELECT count(DISTINCT ts.take_id) n FROM sources s JOIN take_sources ts ON ts.source_id=s.id WHERE s.kind='display'`)
t('hum null', `SELECT count(*) n FROM takes WHERE hum_hz IS NULL`)
t('lufs', `SELECT count(*) n FROM takes WHERE integrated_lufs >= -40`)
t('walk no fts', `SELECT takes.id FROM takes INDEXED BY takes_true_peak_dbtp WHERE true_peak_dbtp IS NOT NULL AND EXISTS (SELECT 1 FROM takes t INDEXED BY takes_by_id WHERE t.id = takes.id AND t.integrated_lufs >= -40 AND t.hum_hz IS NULL AND t.status='ready') AND EXISTS (SELECT 1 FROM take_sources ts JOIN sources s ON s.id = ts.source_id WHERE ts.take_id = takes.id AND s.kind IN ('display')) ORDER BY true_peak_dbtp, takes.id LIMIT 50`)
t('all exact count', `SELECT count(*) FROM take_fts f WHERE take_fts MATCH ? AND EXISTS (SELECT 1 FROM takes t INDEXED BY takes_by_id WHERE t.id = f.rowid AND t.integrated_lufs >= -40 AND t.hum_hz IS NULL AND t.status='ready') AND EXISTS (SELECT 1 FROM take_sources ts JOIN sources s ON s.id = ts.source_id WHERE ts.take_id = f.rowid AND s.kind IN ('display'))`, '"whine"*')
