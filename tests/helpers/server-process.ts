// A Strayfield server in a process of its own, for tests that kill it (kill -9)
// and start it again on the same data. Run with tsx; prints "listening <url>".
// Data folders come from STRAYFIELD_DB and STRAYFIELD_STORAGE; demo team, no demo audio.
import { spawn, type ChildProcess } from 'node:child_process'
import { fileURLToPath } from 'node:url'

export interface ServerProcess {
  url: string
  child: ChildProcess
  /** kill -9, and wait until the process is gone. */
  kill9(): Promise<void>
  /** SIGTERM (kill -9 after 10 s), and wait until the process is gone. */
  stop(): Promise<void>
}

const entry = fileURLToPath(import.meta.url)

/** Starts this file as a server process on the given data; resolves once it listens. */
export function startServerProcess(dbFile: string, storageDir: string): Promise<ServerProcess> {
  const child = spawn(process.execPath, ['--import', 'tsx', entry], {
    env: {
      ...process.env,
      STRAYFIELD_DB: dbFile,
      STRAYFIELD_STORAGE: storageDir,
      SMTP_URL: '',
      SESSION_SECRET: '',
      STRAYFIELD_SERVER_PROCESS: '1',
    },
    stdio: ['ignore', 'pipe', 'pipe'],
  })
  let err = ''
  child.stderr!.on('data', (d) => (err += d))
  const gone = new Promise<void>((r) => child.once('exit', () => r()))
  return new Promise((resolve, reject) => {
    let out = ''
    child.stdout!.on('data', (d) => {
      out += d
      const m = out.match(/listening (http:\/\/\S+)/)
      if (!m) return
      const stop = async () => {
        // A server that does not stop within 10 s (a frozen event loop cannot run its SIGTERM handler) is killed.
        child.kill('SIGTERM')
        const timer = setTimeout(() => child.kill('SIGKILL'), 10_000)
        await gone
        clearTimeout(timer)
      }
      resolve({ url: m[1], child, kill9: async () => void (child.kill('SIGKILL'), await gone), stop })
    })
    child.once('exit', (code) => reject(new Error(`server process exited (${code}): ${err}`)))
  })
}

if (process.env.STRAYFIELD_SERVER_PROCESS === '1' && process.argv[1] === entry) {
  const { startServer } = await import('../../server/server')
  const s = await startServer({ port: 0, demo: true, demoAudio: false, clientDir: '/nonexistent' })
  console.log(`listening ${s.url}`)
  const stop = () => void s.stop().then(() => process.exit(0))
  process.on('SIGTERM', stop)
}
