// Installs the system programs the test suite drives (Debian packages), when
// they are missing and we run as root; otherwise stops with the exact command.
import { execFileSync, spawnSync } from 'node:child_process'
import fs from 'node:fs'

const NEEDED = [
  { program: '/usr/bin/chromium', pkg: 'chromium' },
  { program: '/usr/bin/ffmpeg', pkg: 'ffmpeg' },
  { program: '/usr/bin/ffprobe', pkg: 'ffmpeg' },
  { program: '/usr/bin/sox', pkg: 'sox' },
  { program: '/usr/bin/soxi', pkg: 'sox' },
  { program: '/usr/bin/unzip', pkg: 'unzip' },
  { program: '/usr/bin/zip', pkg: 'zip' },
  { program: '/usr/bin/python3', pkg: 'python3' },
  { program: '/usr/bin/time', pkg: 'time' },
  { program: '/usr/lib/python3/dist-packages/mido/__init__.py', pkg: 'python3-mido' },
  { program: '/usr/bin/aubioonset', pkg: 'aubio-tools' },
  { program: '/usr/share/sounds/alsa/Front_Center.wav', pkg: 'alsa-utils' },
]

const missing = [...new Set(NEEDED.filter((n) => !fs.existsSync(n.program)).map((n) => n.pkg))]
if (missing.length === 0) process.exit(0)

const command = `apt-get update && apt-get install -y --no-install-recommends ${missing.join(' ')}`
const isRoot = typeof process.getuid === 'function' && process.getuid() === 0
if (!isRoot) {
  console.error(`The tests need these Debian packages: ${missing.join(', ')}.\nInstall them with:\n  sudo ${command}`)
  process.exit(1)
}
console.log(`Installing test programs: ${missing.join(', ')}`)
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
