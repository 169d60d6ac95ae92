// npm run user:create -- --email E --name N --role admin
// Creates an account (the first admin of a fresh install). The password comes
// from STRAYFIELD_PASSWORD or is asked for on the terminal.
import { parseArgs } from 'node:util'
import readline from 'node:readline'
import { z } from 'zod'
import { Role } from '@shared/schemas/auth'
import { Email, NameText, Password } from '@shared/schemas/common'
import { loadConfig } from '../core/config'
import { migrateToLatest, openDatabase } from '../core/database'
import { findUserByEmail, hashPassword, insertUser } from '../users/users.service'
import { describeZod } from '../core/errors'

const Args = z.object({ email: Email, name: NameText(120, 'give --name'), role: Role })

async function askPassword(): Promise<string> {
  const rl = readline.createInterface({ input: process.stdin, output: process.stderr, terminal: true })
  const out = rl as unknown as { _writeToOutput: (s: string) => void; output: NodeJS.WritableStream }
  let prompted = false
  out._writeToOutput = (s: string) => {
    if (!prompted) {
      out.output.write(s)
      prompted = true
    }
  }
  const answer = await new Promise<string>((resolve) => rl.question('Password (at least 10 characters): ', resolve))
  rl.close()
  process.stderr.write('\n')
  return answer
}

async function main() {
  const { values } = parseArgs({
    options: { email: { type: 'string' }, name: { type: 'string' }, role: { type: 'string', default: 'admin' } },
  })
  const parsed = Args.safeParse(values)
  if (!parsed.success) {
    console.error(
      `user:create: ${describeZod(parsed.error)}\nUsage: npm run user:create -- --email E --name N --role admin`,
    )
    process.exit(2)
  }
  const password = process.env.STRAYFIELD_PASSWORD ?? (await askPassword())
  const pw = Password.safeParse(password)
  if (!pw.success) {
    console.error(`user:create: password: ${describeZod(pw.error)}`)
    process.exit(2)
  }
  const db = openDatabase(loadConfig().dbFile)
  try {
    await migrateToLatest(db)
    if (await findUserByEmail(db, parsed.data.email)) {
      console.error(`user:create: ${parsed.data.email} already has an account`)
      process.exit(1)
    }
    const user = await insertUser(db, { ...parsed.data, password_hash: await hashPassword(pw.data) })
    console.log(`Created ${user.role} ${user.name} <${user.email}> (id ${user.id})`)
  } finally {
    await db.destroy()
  }
}

await main()
