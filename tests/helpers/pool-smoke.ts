// Run with plain `npx tsx` (no vitest): analyses the given files on the
// audio-task pool and prints [{ file, lufs }] or [{ file, error }] as JSON.
import { holdAudioTasks, runAudioTask } from '../../server/work/audio-tasks'

const release = holdAudioTasks(2)
const out = await Promise.all(
  process.argv.slice(2).map((file) =>
    runAudioTask('analyze', { path: file }).then(
      (r) => ({ file, lufs: r.analysis.loudness.integratedLufs }),
      (e: Error) => ({ file, error: `${e.name}: ${e.message}` }),
    ),
  ),
)
await release()
process.stdout.write(JSON.stringify(out))
