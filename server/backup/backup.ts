// Backups as a feature (issue 9). Order matters: the database first, through
// SQLite's online backup API (a consistent copy while the server writes), then
// the storage files that copy refers to, each with its SHA-256 in a manifest.
// Copying storage first would leave rows whose audio arrived after the copy;
// copying the database file by hand can catch it half-written.
import fs from 'node:fs'
import path from 'node:path'
import { pipeline } from 'node:stream/promises'
import SQLite from 'better-sqlite3'
import { lockData } from '../core/data-lock'
import { hashingTap } from '../core/hash-tap'

export const BACKUP_DB = 'strayfield.sqlite'
export const MANIFEST = 'manifest.json'

export interface ManifestFile {
  /** Relative to the storage folder. */
  path: string
  size: number
  sha256: string
}

export interface Manifest {
  createdAt: string
  database: string
  files: ManifestFile[]
  /** Rows whose file was not in storage when the backup ran (already missing on the live server). */
  missing: string[]
}

/** Copies `from` to `to` (written as `to`.part, then renamed), returning its size and SHA-256. */
async function copyHashed(from: string, to: string): Promise<{ size: number; sha256: string }> {
  fs.mkdirSync(path.dirname(to), { recursive: true })
  const { tap, result } = hashingTap()
  const part = `${to}.part`
  try {
    await pipeline(fs.createReadStream(from), tap, fs.createWriteStream(part))
    fs.renameSync(part, to)
  } catch (err) {
    fs.rmSync(part, { force: true })
    throw err
  }
  return result()
}

function filesUnder(root: string, rel = ''): string[] {
  const out: string[] = []
  let entries: fs.Dirent[]
  try {
    entries = fs.readdirSync(path.join(root, rel), { withFileTypes: true })
  } catch {
    return out // a folder removed meanwhile
  }
  for (const e of entries) {
    const r = path.join(rel, e.name)
    if (e.isDirectory()) out.push(...filesUnder(root, r))
    else if (e.isFile()) out.push(r)
  }
  return out
}

/** Uploads in flight, builds being written, locks: never part of a backup. */
const transient = (rel: string) => {
  const parts = rel.split(path.sep)
  return (
    parts[0] === 'incoming' ||
    (parts[0] === 'builds' && parts[1] === 'tmp') ||
    parts.some((p) => p.startsWith('.')) ||
    rel.endsWith('.part')
  )
}

function integrityOk(file: string): string {
  const db = new SQLite(file, { readonly: true, fileMustExist: true })
  try {
    return String(db.pragma('integrity_check', { simple: true }))
  } finally {
    db.close()
  }
}

export async function backup(dbFile: string, storageDir: string, outDir: string): Promise<Manifest> {
  if (fs.existsSync(outDir) && fs.readdirSync(outDir).length)
    throw new Error(`${outDir} is not empty; give a new or empty folder for the backup`)
  fs.mkdirSync(path.join(outDir, 'storage'), { recursive: true })

  // 1. The database, consistent as of one moment, while the server may keep writing.
  const copy = path.join(outDir, BACKUP_DB)
  const live = new SQLite(dbFile, { readonly: true, fileMustExist: true })
  try {
    await live.backup(copy)
  } finally {
    live.close()
  }
  const check = integrityOk(copy)
  if (check !== 'ok') throw new Error(`the database copy failed its integrity check: ${check}`)

  // 2. The storage that copy refers to. Audio is named by content: only the files of takes in the
  // copy are taken (an upload that landed after it has no row there), each checked against its row.
  const snap = new SQLite(copy, { readonly: true })
  const takes = snap.prepare('SELECT audio_path AS p, sha256 AS sha FROM takes').all() as { p: string; sha: string }[]
  snap.close()
  const wanted = new Map(takes.map((t) => [path.normalize(t.p), t.sha]))
  const files: ManifestFile[] = []
  const missing: string[] = []
  for (const rel of filesUnder(storageDir)) {
    if (transient(rel)) continue
    if (rel.split(path.sep)[0] === 'audio' && !wanted.has(rel)) continue
    let got
    try {
      got = await copyHashed(path.join(storageDir, rel), path.join(outDir, 'storage', rel))
    } catch (err) {
      if ((err as NodeJS.ErrnoException).code === 'ENOENT') continue // removed meanwhile (a spectrogram pruned, a pack deleted)
      throw err
    }
    const expected = wanted.get(rel)
    if (expected && expected !== got.sha256)
      throw new Error(`${rel} does not match its take's SHA-256: the stored audio is damaged`)
    files.push({ path: rel.split(path.sep).join('/'), ...got })
  }
  const copied = new Set(files.map((f) => path.normalize(f.path)))
  for (const rel of wanted.keys()) if (!copied.has(rel)) missing.push(rel)

  // 3. The manifest last: a backup without it is incomplete, and restore refuses it.
  const manifest: Manifest = { createdAt: new Date().toISOString(), database: BACKUP_DB, files, missing }
  fs.writeFileSync(path.join(outDir, `${MANIFEST}.part`), JSON.stringify(manifest, null, 1))
  fs.renameSync(path.join(outDir, `${MANIFEST}.part`), path.join(outDir, MANIFEST))
  return manifest
}

/**
 * Puts a backup into a fresh database file and storage folder, checking every file's SHA-256 on
 * the way, under the same lock a server takes (so no server can use the data meanwhile). The
 * database goes last: a restore cut short leaves no database, never one without its files.
 */
export async function restore(fromDir: string, dbFile: string, storageDir: string): Promise<Manifest> {
  const manifestFile = path.join(fromDir, MANIFEST)
  if (!fs.existsSync(manifestFile))
    throw new Error(`${fromDir} holds no ${MANIFEST}: not a backup, or one that did not finish`)
  const manifest = JSON.parse(fs.readFileSync(manifestFile, 'utf8')) as Manifest
  if (fs.existsSync(dbFile))
    throw new Error(`${dbFile} exists; restore into a fresh place (move the current data aside first)`)
  if (filesUnder(storageDir).some((f) => !transient(f)))
    throw new Error(`${storageDir} already holds files; restore into a fresh place (move the current data aside first)`)
  const check = integrityOk(path.join(fromDir, manifest.database))
  if (check !== 'ok') throw new Error(`the backup's database failed its integrity check: ${check}`)

  const lock = lockData(dbFile, storageDir)
  try {
    for (const f of manifest.files) {
      const rel = path.normalize(f.path)
      if (rel.startsWith('..') || path.isAbsolute(rel))
        throw new Error(`manifest path leaves the storage folder: ${f.path}`)
      const target = path.join(storageDir, rel)
      const got = await copyHashed(path.join(fromDir, 'storage', rel), target)
      if (got.sha256 !== f.sha256 || got.size !== f.size) {
        fs.rmSync(target, { force: true })
        throw new Error(`${f.path} in the backup does not match its manifest (SHA-256 or size): the backup is damaged`)
      }
    }
    const part = `${dbFile}.restoring`
    fs.mkdirSync(path.dirname(dbFile), { recursive: true })
    fs.copyFileSync(path.join(fromDir, manifest.database), part)
    fs.renameSync(part, dbFile)
  } finally {
    lock.release()
  }
  return manifest
}
