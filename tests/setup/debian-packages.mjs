// Installs the Debian packages behind the programs a suite drives, when any is missing and we run
// as root; otherwise stops with the exact command to run. `needed`: [{ program, pkg }], `who`: the
// suite's name in the messages. Shared by the test suite and the scaled suite.
import { execFileSync, spawnSync } from 'node:child_process'
import fs from 'node:fs'

export function installMissing(needed, who) {
  const missing = [...new Set(needed.filter((n) => !fs.existsSync(n.program)).map((n) => n.pkg))]
  if (!missing.length) return
  const command = `apt-get update && apt-get install -y --no-install-recommends ${missing.join(' ')}`
  if (process.getuid?.() !== 0) {
    console.error(`${who} needs these Debian packages: ${missing.join(', ')}.\nInstall them with:\n  sudo ${command}`)
    process.exit(1)
  }
  console.log(`Installing for ${who}: ${missing.join(', ')}`)
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' }
  execFileSync('apt-get', ['update', '-qq'], { stdio: 'inherit', env })
  const res = spawnSync('apt-get', ['install', '-y', '-qq', '--no-install-recommends', ...missing], {
    stdio: 'inherit',
    env,
  })
  if (res.status !== 0) {
    console.error(`Installing failed. Run by hand:\n  ${command}`)
    process.exit(1)
  }
}
