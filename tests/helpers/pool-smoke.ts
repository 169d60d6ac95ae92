// Run with plain `npx tsx` (no vitest): analyses the given files through the
// worker pool and prints [{ file, lufs }] or [{ file, error }] as JSON.
import { createAnalysisPool } from '../../server/audio/pool'

const pool = createAnalysisPool(2)
const out = await Promise.all(
  process.argv.slice(2).map((file) =>
    pool.run(file).then(
      (r) => ({ file, lufs: r.analysis.loudness.integratedLufs }),
      (e: Error) => ({ file, error: `${e.name}: ${e.message}` }),
    ),
  ),
)
await pool.close()
process.stdout.write(JSON.stringify(out))
