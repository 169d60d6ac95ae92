import { describe, expect, it } from 'vitest'
import { ESLint } from 'eslint'
import { readdirSync, readFileSync } from 'node:fs'
import { join } from 'node:path'

// The architecture rule in eslint.config.js: one feature may not reach into another feature's repository.
const eslint = new ESLint({ cwd: process.cwd() })
const lint = async (filePath: string, code: string) => {
  const [result] = await eslint.lintText(code, { filePath })
  return result.messages.filter((m) => m.ruleId === 'boundaries/dependencies')
}

describe('feature boundaries', () => {
  it("refuses an import of another feature's repository", async () => {
    const messages = await lint(
      'server/ingest/example.ts',
      "import { findTake } from '../takes/takes.repository'\nexport const f = findTake\n",
    )
    expect(messages).toHaveLength(1)
    expect(messages[0].severity).toBe(2)
  })

  it("allows the other feature's service, and a feature's own repository", async () => {
    expect(
      await lint(
        'server/ingest/example.ts',
        "import { findTake } from '../takes/takes.service'\nexport const f = findTake\n",
      ),
    ).toHaveLength(0)
    expect(
      await lint(
        'server/takes/example.ts',
        "import { findTake } from './takes.repository'\nexport const f = findTake\n",
      ),
    ).toHaveLength(0)
  })

  it('keeps auth and team apart: neither imports the other', () => {
    const importsOf = (dir: string) =>
      readdirSync(dir)
        .filter((f) => f.endsWith('.ts'))
        .flatMap((f) => [...readFileSync(join(dir, f), 'utf8').matchAll(/from '([^']+)'/g)].map((m) => m[1]))
    expect(importsOf('server/auth').filter((s) => s.includes('/team/'))).toEqual([])
    expect(importsOf('server/team').filter((s) => s.includes('/auth/'))).toEqual([])
  })
})
