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
  /**
   * Sign-in limits (server/auth/login-throttle.ts): failures per account before delays start,
   * the first delay (doubling with each further failure) and its cap, and how long failures are
   * remembered. Client addresses get three times the free failures and a cap of 15 minutes.
   */
  loginFailuresAllowed: number
  loginDelayBaseMs: number
  loginDelayMaxMs: number
  loginWindowMs: number
  /** Password-reset requests allowed per hour, per target address and per client address. */
  passwordResetsPerEmail: number
  passwordResetsPerAddress: number
  /** Express's `trust proxy` (TRUST_PROXY): hops or the proxy's addresses; null trusts none. */
  trustProxy: number | string[] | null
  /** Signed-in sessions end this long after sign-in, however active (besides the rolling 14 days). */
  sessionAbsoluteMs: number
  /** Start the embedded mail catcher when no SMTP_URL is set. */
  mailCatcher: boolean
  /** Port of the embedded mail catcher (0: any free port). */
  mailCatcherPort: number
  /** Takes measured at once (0: the audio-task pool's threads less one). */
  analysisWorkers: number
  /** Threads of the one audio-task pool, server/work/ (0: the default; at least two). */
  heavyThreads: number
  /** REDIS_URL: jobs go through BullMQ to `npm run worker` processes; null: jobs run in this process. */
  redisUrl: string | null
  /** Such tasks one user may have running or waiting at once. */
  heavyPerUser: number
  /** Spectrogram images kept per take, and for all takes together (bytes); least recently used go first. */
  spectrogramsPerTake: number
  spectrogramCacheBytes: number
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
    loginFailuresAllowed: 5,
    loginDelayBaseMs: 1000,
    loginDelayMaxMs: 60 * 1000,
    loginWindowMs: 15 * 60 * 1000,
    passwordResetsPerEmail: 3,
    passwordResetsPerAddress: 10,
    trustProxy: parseTrustProxy(env.TRUST_PROXY),
    sessionAbsoluteMs: 30 * 24 * 60 * 60 * 1000,
    mailCatcher: !env.SMTP_URL,
    mailCatcherPort: Number(env.STRAYFIELD_MAIL_CATCHER_PORT ?? 0),
    analysisWorkers: Number(env.STRAYFIELD_ANALYSIS_WORKERS ?? 0),
    heavyThreads: Number(env.STRAYFIELD_HEAVY_WORKERS ?? 0),
    redisUrl: env.REDIS_URL || null,
    heavyPerUser: 3,
    spectrogramsPerTake: 12,
    spectrogramCacheBytes: Number(env.STRAYFIELD_SPECTROGRAM_CACHE_MB ?? 1024) * 2 ** 20,
    maxUploadBytes: Number(env.STRAYFIELD_MAX_UPLOAD_BYTES ?? 8 * 2 ** 30),
    runJobs: true,
    demoAudio: true,
    requestBodyTimeoutMs: 300_000,
    uploadMinBytesPerSecond: 4096,
    uploadRateWindowMs: 60_000,
  }
  return { ...base, ...overrides }
}

/** TRUST_PROXY: a number of hops ("1"), or the proxy's addresses or subnets, comma-separated ("10.0.0.2, loopback"). */
export function parseTrustProxy(v: string | undefined): number | string[] | null {
  const t = v?.trim()
  if (!t || t === '0' || t === 'false') return null
  if (/^\d+$/.test(t)) return Number(t)
  return t
    .split(',')
    .map((s) => s.trim())
    .filter(Boolean)
}

/** Whether a URL's host is this machine (localhost, 127.0.0.0/8, ::1). */
export function isLoopbackUrl(url: string): boolean {
  let host: string
  try {
    host = new URL(url).hostname.toLowerCase()
  } catch {
    return false
  }
  return host === 'localhost' || host.endsWith('.localhost') || /^127(\.\d{1,3}){3}$/.test(host) || host === '[::1]'
}

export const DEMO_REFUSAL =
  'Demo mode is on, and its accounts share a published password, but PUBLIC_URL is not a loopback address. ' +
  'For a real deployment set STRAYFIELD_DEMO=0 and create an admin with ' +
  'npm run user:create -- --email you@studio.example --name "Your Name" --role admin'

/** Refuses a configuration that would expose the demo team beyond this machine. */
export function checkDemoIsLocal(config: Pick<Config, 'demo' | 'publicUrl'>): void {
  if (config.demo && !isLoopbackUrl(config.publicUrl))
    throw new Error(`${DEMO_REFUSAL} (PUBLIC_URL is ${config.publicUrl})`)
}
