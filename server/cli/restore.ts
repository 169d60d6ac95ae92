// npm run restore -- DIR
// Puts a backup made by `npm run backup` into STRAYFIELD_DB and STRAYFIELD_STORAGE, which must be
// fresh (no database file, no stored files), checking every file's SHA-256. See README, "Backups".
import { loadConfig } from '../core/config'
import { restore } from '../backup/backup'

const dir = process.argv[2]
if (!dir) {
  console.error('usage: npm run restore -- DIR')
  process.exit(2)
}
const { dbFile, storageDir } = loadConfig()
try {
  const m = await restore(dir, dbFile, storageDir)
  console.log(
    `Restored the backup of ${m.createdAt} (${m.files.length} storage files) into ${dbFile} and ${storageDir}`,
  )
} catch (err) {
  console.error(`Restore failed: ${(err as Error).message}`)
  process.exit(1)
}
