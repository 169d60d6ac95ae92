import http from 'node:http'
import type { AddressInfo } from 'node:net'
import { loadConfig, type Config } from './core/config'
import { migrateToLatest, openDatabase } from './core/database'
import { createMailer } from './mail/mailer'
import { createApp } from './app'
import { seedDemo } from './demo/seed'
import type { AppContext } from './core/context'

export interface RunningServer {
  url: string
  port: number
  ctx: AppContext
  http: http.Server
  stop(): Promise<void>
}

/** Opens the database, migrates, seeds the demo when asked, starts mail and HTTP. */
export async function startServer(overrides: Partial<Config> = {}, env: NodeJS.ProcessEnv = process.env): Promise<RunningServer> {
  const config = loadConfig(env, overrides)
  const db = openDatabase(config.dbFile)
  await migrateToLatest(db)
  const mailer = await createMailer(config, db)
  const ctx: AppContext = { config, db, mailer }
  if (config.demo) await seedDemo(ctx)
  const built = await createApp(ctx)
  const server = http.createServer(built.app)
  await new Promise<void>((resolve, reject) => {
    server.once('error', reject)
    server.listen(config.port, resolve)
  })
  const port = (server.address() as AddressInfo).port
  return {
    url: `http://localhost:${port}`,
    port,
    ctx,
    http: server,
    async stop() {
      await new Promise<void>((resolve) => {
        server.close(() => resolve())
        server.closeAllConnections()
      })
      await built.close()
      await mailer.close()
      await db.destroy()
    },
  }
}
