// Everything the server reads from the environment, read once, in one place.
import path from 'node:path'

export interface Config {
  port: number
  dbFile: string
  storageDir: string
  demo: boolean
  smtpUrl: string | null
  sessionSecret: string | null
  publicUrl: string
  /** Directory of the built client (vite build); served when present. */
  clientDir: string
  /** Failed sign-ins allowed per window, per address and per account. */
  loginFailuresAllowed: number
  loginWindowMs: number
  /** Start the embedded mail catcher when no SMTP_URL is set. */
  mailCatcher: boolean
  /** Port of the embedded mail catcher (0: any free port). */
  mailCatcherPort: number
  analysisWorkers: number
  /** Largest upload accepted, in bytes (at least 4 GiB for long takes). */
  maxUploadBytes: number
  /** Start the durable job runner (tests of the queue itself may start it by hand). */
  runJobs: boolean
  /** With the demo team, also synthesise and measure the demo capture session. */
  demoAudio: boolean
  /** Every request but an upload must have sent its whole body within this (0: no limit). */
  requestBodyTimeoutMs: number
  /** An upload sending less than this over a window of `uploadRateWindowMs` is cut off (0: no rule). */
  uploadMinBytesPerSecond: number
  uploadRateWindowMs: number
}

export function loadConfig(env: NodeJS.ProcessEnv = process.env, overrides: Partial<Config> = {}): Config {
  const port = Number(env.PORT ?? 5170)
  const base: Config = {
    port,
    dbFile: path.resolve(env.STRAYFIELD_DB ?? 'db/strayfield.sqlite'),
    storageDir: path.resolve(env.STRAYFIELD_STORAGE ?? 'storage'),
    demo: (env.STRAYFIELD_DEMO ?? '1') !== '0',
    smtpUrl: env.SMTP_URL || null,
    sessionSecret: env.SESSION_SECRET || null,
    publicUrl: (env.PUBLIC_URL || `http://localhost:${port}`).replace(/\/+$/, ''),
    clientDir: path.resolve('dist'),
    loginFailuresAllowed: 10,
    loginWindowMs: 15 * 60 * 1000,
    mailCatcher: !env.SMTP_URL,
    mailCatcherPort: Number(env.STRAYFIELD_MAIL_CATCHER_PORT ?? 0),
    analysisWorkers: Number(env.STRAYFIELD_ANALYSIS_WORKERS ?? 0),
    maxUploadBytes: Number(env.STRAYFIELD_MAX_UPLOAD_BYTES ?? 8 * 2 ** 30),
    runJobs: true,
    demoAudio: true,
    requestBodyTimeoutMs: 300_000,
    uploadMinBytesPerSecond: 4096,
    uploadRateWindowMs: 60_000,
  }
  return { ...base, ...overrides }
}
