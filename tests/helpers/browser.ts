import fs from 'node:fs'
import path from 'node:path'
import { chromium, type Browser, type Page } from 'playwright-core'

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
