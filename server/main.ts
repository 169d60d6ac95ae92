import { startServer } from './server'

const server = await startServer()
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
