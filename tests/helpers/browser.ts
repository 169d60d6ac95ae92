import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll } from 'vitest'
import { chromium, type Browser, type Page } from 'playwright-core'
import type { Config } from '../../server/core/config'
import { startTestServer, type TestServer } from './server'

export const SCREENSHOTS = path.resolve('tests/.artifacts/screenshots')

/** Debian's Chromium, headless, no background traffic; playwright gives each launch a fresh temporary profile. */
export async function launchBrowser(): Promise<Browser> {
  return chromium.launch({
    executablePath: process.env.CHROMIUM_PATH ?? '/usr/bin/chromium',
    headless: true,
    args: [
      '--no-sandbox',
      '--disable-gpu',
      '--disable-background-networking',
      '--disable-component-update',
      '--disable-sync',
      '--no-first-run',
      '--disable-quic',
    ],
  })
}

export async function screenshot(page: Page, name: string): Promise<string> {
  fs.mkdirSync(SCREENSHOTS, { recursive: true })
  const file = path.join(SCREENSHOTS, `${name}.png`)
  await page.screenshot({ path: file, fullPage: true })
  return file
}

export async function signInThroughForm(page: Page, baseUrl: string, email: string, password = 'strayfield-demo') {
  await page.goto(`${baseUrl}/sign-in`)
  await page.locator('input[name=email]').fill(email)
  await page.locator('input[name=password]').fill(password)
  await page.locator('[data-test=sign-in]').click()
  await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'))
}

/**
 * A real server on the built client plus Debian's Chromium for one test file,
 * started before its tests and stopped after them.
 */
export function useBrowserServer(overrides: Partial<Config> = {}) {
  const env = {} as { server: TestServer; browser: Browser }
  beforeAll(async () => {
    env.server = await startTestServer({ clientDir: path.resolve('dist'), ...overrides })
    env.browser = await launchBrowser()
  })
  afterAll(async () => {
    await env.browser?.close()
    await env.server?.stop()
  })
  return env
}
