// The comment box's @-picker in Debian's Chromium, used as a person uses it:
// type "@da", pick with Enter, see who will be told, see a name that matches
// nobody called out as plain text, close the picker with Escape, post with
// Ctrl+Enter. The component is built on its own page (tests/browser/harness/)
// and served by a real server, so the member list and the notify preview are
// the API's own answers.
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { fileURLToPath } from 'node:url'
import { afterAll, beforeAll, expect, it } from 'vitest'
import { build } from 'vite'
import vue from '@vitejs/plugin-vue'
import type { Browser, Page } from 'playwright-core'
import { startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot } from '../helpers/browser'

const here = path.dirname(fileURLToPath(import.meta.url))
let server: TestServer
let browser: Browser
let page: Page

beforeAll(async () => {
  const out = fs.mkdtempSync(path.join(os.tmpdir(), 'strayfield-mention-'))
  await build({
    configFile: false,
    logLevel: 'silent',
    root: path.join(here, 'harness'),
    plugins: [vue()],
    resolve: { alias: { '@': path.resolve('src'), '@shared': path.resolve('shared') } },
    build: { outDir: out, emptyOutDir: true, rollupOptions: { input: path.join(here, 'harness', 'mention.html') } },
  })
  fs.renameSync(path.join(out, 'mention.html'), path.join(out, 'index.html'))
  server = await startTestServer({ clientDir: out })
  browser = await launchBrowser()
  page = await (await browser.newContext({ viewport: { width: 1000, height: 700 } })).newPage()
  // Signed in as the recordist (so the designer is someone else), through the API in the page's own cookie jar.
  const { token } = (await (await page.request.get(`${server.url}/api/auth/csrf`)).json()) as { token: string }
  const login = await page.request.post(`${server.url}/api/auth/login`, {
    headers: { 'x-csrf-token': token },
    data: { email: 'recordist@example.test', password: 'strayfield-demo' },
  })
  expect(login.status()).toBe(200)
  await page.goto(`${server.url}/`)
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

it('picks a member after "@", lists who will be notified, keeps an unknown name as plain text, and posts on Ctrl+Enter', async () => {
  const box = page.getByRole('combobox', { name: 'Comment' })
  await box.click()
  await page.keyboard.type('Loud burst at 0:12, @da')
  const picker = page.locator('[data-test=mention-picker]')
  await expect.poll(() => picker.isVisible(), { timeout: 10_000 }).toBe(true)
  // Names with a word starting "da" come first, then names holding it anywhere.
  await expect
    .poll(() => picker.getByRole('option').allInnerTexts())
    .toEqual(['Dana Humbucker @Dana.Humbucker', 'Ada Quillfeather @Ada.Quillfeather'])
  await screenshot(page, 'mention-picker')
  await page.keyboard.press('Enter')
  expect(await box.inputValue()).toBe('Loud burst at 0:12, @Dana.Humbucker ')
  expect(await picker.isVisible()).toBe(false)

  await page.keyboard.type('and @nobody.here, listen')
  await expect
    .poll(() => page.locator('[data-test=mention-notify]').innerText(), { timeout: 10_000 })
    .toBe('Will notify Dana Humbucker by e-mail.')
  await expect
    .poll(() => page.locator('[data-test=mention-unmatched]').innerText(), { timeout: 10_000 })
    .toBe('@nobody.here matches nobody on the team: kept as plain text, nobody is told.')

  // Arrows move through the list; Escape closes it and leaves the text as typed.
  await page.keyboard.type(' @')
  await expect.poll(() => box.getAttribute('aria-expanded')).toBe('true')
  await page.keyboard.press('ArrowDown')
  await expect.poll(() => picker.locator('[aria-selected=true]').count()).toBe(1)
  await page.keyboard.press('Escape')
  await expect.poll(() => box.getAttribute('aria-expanded')).toBe('false')
  await page.keyboard.press('Backspace')
  await page.keyboard.press('Backspace')
  await screenshot(page, 'mention-input')

  await page.keyboard.press('Control+Enter')
  await expect
    .poll(() => page.locator('[data-test=posted]').innerText())
    .toBe('Loud burst at 0:12, @Dana.Humbucker and @nobody.here, listen')
})
