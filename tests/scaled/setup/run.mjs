// npm run test:scaled: installs the Debian packages it needs (as root), starts redis-server and
// a Ceph S3 gateway on 127.0.0.1, runs the scaled suite and the ingest, library and packs API
// tests against them (STORAGE_URL=s3://…), and stops every service it started, also on failure
// or Ctrl-C.
import { spawn } from 'node:child_process'
import { randomBytes } from 'node:crypto'
import { CreateBucketCommand, S3Client } from '@aws-sdk/client-s3'
import { PROGRAMS, startServices } from './services.mjs'
import { installMissing } from '../../setup/debian-packages.mjs'

installMissing(PROGRAMS, 'The scaled suite')
const services = await startServices()
let child = null
let exiting = false
const finish = async (code) => {
  if (exiting) return
  exiting = true
  if (child && child.exitCode === null) child.kill('SIGTERM')
  await services.stop()
  process.exit(code)
}
process.on('SIGINT', () => void finish(130))
process.on('SIGTERM', () => void finish(143))

try {
  const bucket = 'strayfield-tests'
  const s3 = new S3Client({
    region: services.env.S3_REGION,
    endpoint: services.env.S3_ENDPOINT,
    forcePathStyle: true,
    credentials: { accessKeyId: services.env.AWS_ACCESS_KEY_ID, secretAccessKey: services.env.AWS_SECRET_ACCESS_KEY },
  })
  await s3.send(new CreateBucketCommand({ Bucket: bucket }))
  s3.destroy()
  const env = {
    ...process.env,
    ...services.env,
    STORAGE_URL: `s3://${bucket}/run-${randomBytes(4).toString('hex')}`,
    STRAYFIELD_SCALED: '1',
  }
  const args = ['vitest', 'run', '--config', 'tests/scaled/vitest.config.ts', ...process.argv.slice(2)]
  child = spawn('npx', args, { stdio: 'inherit', env })
  const code = await new Promise((resolve) => child.once('exit', (c, signal) => resolve(c ?? (signal ? 1 : 0))))
  await finish(code)
} catch (err) {
  console.error(err)
  await finish(1)
}
