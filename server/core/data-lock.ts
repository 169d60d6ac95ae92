// One server per database and storage folder. A second server started by mistake
// on the same data would sweep the live one's uploads in flight and queue its
// running jobs again; so before touching anything, a server takes an exclusive
// lock on its data and refuses to start, naming the holder, when it cannot.
//
// The lock is SQLite's own: a small lock database beside the data, held in an
// open EXCLUSIVE transaction. The operating system releases it when the process
// ends in any way (kill -9 included), so no stale lock needs clearing by hand,
// and SQLite keeps two connections of one process apart as well. A text file
// beside it names the holder for the message.
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import SQLite from 'better-sqlite3'

export interface DataLock {
  release(): void
}

export class DataLockedError extends Error {}

interface Holder {
  pid: number
  host: string
  startedAt: string
}

function lockOne(file: string, what: string): DataLock {
  // `what`: the data the lock stands for, as the refusal names it.
  fs.mkdirSync(path.dirname(file), { recursive: true })
  const db = new SQLite(file, { timeout: 0 })
  const info = `${file}.holder`
  try {
    db.pragma('locking_mode = EXCLUSIVE')
    db.exec('BEGIN EXCLUSIVE')
  } catch (err) {
    db.close()
    if ((err as { code?: string }).code !== 'SQLITE_BUSY') throw err
    let holder: Holder | null = null
    try {
      holder = JSON.parse(fs.readFileSync(info, 'utf8')) as Holder
    } catch {
      // written a moment after the lock is taken; the message does without it
    }
    const who = holder ? `process ${holder.pid} on ${holder.host}, started ${holder.startedAt}` : 'another process'
    throw new DataLockedError(
      `Another Strayfield server (${who}) is using ${what}. Stop it first, or give this server its own STRAYFIELD_DB and STRAYFIELD_STORAGE.`,
    )
  }
  const me: Holder = { pid: process.pid, host: os.hostname(), startedAt: new Date().toISOString() }
  fs.writeFileSync(info, JSON.stringify(me))
  let held = true
  return {
    release() {
      if (!held) return
      held = false
      fs.rmSync(info, { force: true })
      db.exec('ROLLBACK')
      db.close()
    },
  }
}

/** Locks the database (a lock file beside it) and the storage folder; throws DataLockedError naming the holder. */
export function lockData(dbFile: string, storageDir: string): DataLock {
  const locks: DataLock[] = []
  try {
    if (dbFile !== ':memory:') locks.push(lockOne(`${dbFile}.lock`, `the database ${dbFile}`))
    locks.push(lockOne(path.join(storageDir, '.strayfield.lock'), `the storage folder ${storageDir}`))
  } catch (err) {
    for (const l of locks) l.release()
    throw err
  }
  return { release: () => locks.reverse().forEach((l) => l.release()) }
}
