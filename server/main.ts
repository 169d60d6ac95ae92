import { startServer } from './server'
import { DataLockedError } from './core/data-lock'

const server = await startServer().catch((err: unknown) => {
  // Another server holds this data: say who, and stop without touching anything.
  if (!(err instanceof DataLockedError)) throw err
  console.error(err.message)
  process.exit(1)
})
const { config } = server.ctx
console.log(`Strayfield is running on ${server.url}`)
console.log(`  database: ${config.dbFile}`)
console.log(`  storage:  ${config.storageDir}`)
console.log(`  mail:     ${server.ctx.mailer.describe()}`)
if (config.demo) console.log('  demo mode: sign in as admin@example.test with the password strayfield-demo')

const shutdown = () => {
  server.stop().then(
    () => process.exit(0),
    () => process.exit(1),
  )
}
process.on('SIGINT', shutdown)
process.on('SIGTERM', shutdown)
