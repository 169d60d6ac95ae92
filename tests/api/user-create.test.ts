import { execFile } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { promisify } from 'node:util'
import { describe, expect, it } from 'vitest'
import { Client, startTestServer } from '../helpers/server'

const run = promisify(execFile)

describe('npm run user:create', () => {
  it('creates an admin who can then sign in, and refuses a short password', async () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'sf-cli-'))
    const dbFile = path.join(dir, 'cli.sqlite')
    const env = { ...process.env, STRAYFIELD_DB: dbFile, STRAYFIELD_PASSWORD: 'first-admin-password' }
    const ok = await run(
      'npx',
      [
        'tsx',
        'server/cli/user-create.ts',
        '--email',
        'First.Admin@example.test',
        '--name',
        'First Admin',
        '--role',
        'admin',
      ],
      { env },
    )
    expect(ok.stdout).toMatch(/Created admin First Admin <first.admin@example.test>/)

    const short = await run('npx', ['tsx', 'server/cli/user-create.ts', '--email', 'x@example.test', '--name', 'X'], {
      env: { ...env, STRAYFIELD_PASSWORD: 'short' },
    }).catch((e) => e)
    expect(short.code).toBe(2)
    expect(short.stderr).toMatch(/at least 10/)

    const server = await startTestServer({ dbFile, demo: false })
    try {
      const c = new Client(server.url)
      const res = await c.login('first.admin@example.test', 'first-admin-password')
      expect(res.status).toBe(200)
      expect(res.body.user.role).toBe('admin')
      // Demo mode off: the demo accounts were never seeded.
      expect((await c.get('/api/users')).body.users).toHaveLength(1)
    } finally {
      await server.stop()
    }
  })
})
