// One analysis for `npm run bench:analyze`, in a process of its own: FILE's
// measurement and its peaks file (to PEAKS), then the seconds it took as JSON.
// The benchmark runs it bundled to plain JavaScript, as the server's worker
// threads run the analysis (server/core/workers.ts), and through tsx for
// comparison with older tables.
import { analyzeFile } from '../server/audio/analyze'

const [file, peaks] = process.argv.slice(2)
const t0 = performance.now()
const r = await analyzeFile(file, { peaksPath: peaks })
const seconds = (performance.now() - t0) / 1000
process.stdout.write(JSON.stringify({ seconds, integrated: r.analysis.loudness.integratedLufs }))
