// npm run backup -- DIR
// A consistent copy of the database (SQLite's online backup, safe while the server runs), then
// the storage files it refers to with their SHA-256s in DIR/manifest.json. See README, "Backups".
import { loadConfig } from '../core/config'
import { backup } from '../backup/backup'

const dir = process.argv[2]
if (!dir) {
  console.error('usage: npm run backup -- DIR   (DIR new or empty)')
  process.exit(2)
}
const { dbFile, storageDir } = loadConfig()
try {
  const m = await backup(dbFile, storageDir, dir)
  console.log(`Backed up ${dbFile} and ${m.files.length} storage files to ${dir}`)
  if (m.missing.length)
    console.warn(`Already missing from storage (rows kept, no file to copy): ${m.missing.join(', ')}`)
} catch (err) {
  console.error(`Backup failed: ${(err as Error).message}`)
  process.exit(1)
}
