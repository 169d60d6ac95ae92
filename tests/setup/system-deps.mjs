// Installs the system programs the test suite drives (Debian packages), when
// they are missing and we run as root; otherwise stops with the exact command.
import { installMissing } from './debian-packages.mjs'

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

installMissing(NEEDED, 'The test suite')
