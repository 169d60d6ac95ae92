// The team table as an admin uses it, keyboard first: status buttons instead
// of toggle switches, a confirm dialog that names the person and what follows,
// and a notice beside the control with an Undo.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'

let server: TestServer
let browser: Browser
let page: Page
let admin: Client

const member = (email: string) => page.locator(`[data-member="${email}"]`)
const activeOf = async (email: string) =>
  ((await admin.get('/api/users')).body.users as { email: string; active: boolean; role: string }[]).find(
    (u) => u.email === email,
  )!

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  admin = await signedIn(server.url, 'admin')
  browser = await launchBrowser()
  page = await browser.newPage({ viewport: { width: 1440, height: 900 } })
  await signInThroughForm(page, server.url, 'admin@example.test')
  await page.goto(`${server.url}/team`)
  await member('producer@example.test').waitFor()
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

describe('team: status buttons, confirmations and Undo', () => {
  it('asks before deactivating, naming the person and the consequence; Escape keeps them active', async () => {
    const deactivate = member('producer@example.test').getByRole('button', { name: 'Deactivated' })
    expect(
      await member('producer@example.test').getByRole('button', { name: 'Active' }).getAttribute('aria-pressed'),
    ).toBe('true')
    await deactivate.focus()
    await page.keyboard.press('Enter')
    const dialog = page.getByRole('dialog')
    await expect.poll(() => dialog.isVisible()).toBe(true)
    const name = (await member('producer@example.test').locator('td').first().innerText()).trim()
    expect(await dialog.innerText()).toContain(`Deactivate ${name}?`)
    expect(await dialog.innerText()).toMatch(/signed out on every device/)
    await page.keyboard.press('Escape')
    await expect.poll(() => dialog.isVisible()).toBe(false)
    expect((await activeOf('producer@example.test')).active).toBe(true)
  })

  it('deactivates on confirmation, says so beside the buttons, and Undo reactivates', async () => {
    await member('producer@example.test').getByRole('button', { name: 'Deactivated' }).click()
    await page
      .getByRole('dialog')
      .getByRole('button', { name: /^Deactivate / })
      .click()
    const notice = page.locator('[data-test=notice]')
    await expect.poll(() => notice.innerText()).toMatch(/is deactivated and signed out/)
    expect((await activeOf('producer@example.test')).active).toBe(false)
    expect(
      await member('producer@example.test').getByRole('button', { name: 'Deactivated' }).getAttribute('aria-pressed'),
    ).toBe('true')

    // The notice stands next to the control that caused it, not at the top of the screen.
    const buttons = (await member('producer@example.test').locator('.sf-status-buttons').boundingBox())!
    const box = (await notice.boundingBox())!
    expect(Math.abs(box.y - (buttons.y + buttons.height))).toBeLessThan(40)
    await screenshot(page, 'team-deactivated-notice')

    await notice.getByRole('button', { name: 'Undo' }).click()
    await expect.poll(async () => (await activeOf('producer@example.test')).active).toBe(true)
    await expect
      .poll(() => member('producer@example.test').getByRole('button', { name: 'Active' }).getAttribute('aria-pressed'))
      .toBe('true')
  })

  it('asks before a role change; going ahead changes it, and Undo puts the old role back', async () => {
    await member('collaborator@example.test')
      .getByRole('combobox', { name: /^Role of/ })
      .focus()
    await page.keyboard.press('Enter')
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'Producer' }).click()
    const dialog = page.getByRole('dialog')
    await expect.poll(() => dialog.innerText()).toMatch(/Make .+ producer\?/)
    await dialog.getByRole('button', { name: 'Make producer' }).click()
    await expect.poll(async () => (await activeOf('collaborator@example.test')).role).toBe('producer')
    await page.locator('[data-test=notice]').getByRole('button', { name: 'Undo' }).click()
    await expect.poll(async () => (await activeOf('collaborator@example.test')).role).toBe('collaborator')
  })

  it('withdraws a waiting invitation after asking; it leaves the list', async () => {
    await admin.post('/api/invitations', { email: 'maybe.later@example.test', role: 'collaborator' })
    await page.reload()
    const row = page.locator('[data-invitation="maybe.later@example.test"]')
    await row.getByRole('button', { name: 'Withdraw' }).click()
    const dialog = page.getByRole('dialog')
    await expect.poll(() => dialog.innerText()).toMatch(/Withdraw the invitation to maybe\.later@example\.test\?/)
    await dialog.getByRole('button', { name: 'Withdraw the invitation' }).click()
    await expect.poll(() => page.locator('[data-test=notice]').innerText()).toMatch(/withdrawn/)
    await expect.poll(() => row.count()).toBe(0)
    const left = (await admin.get('/api/invitations')).body.invitations as { email: string }[]
    expect(left.map((i) => i.email)).not.toContain('maybe.later@example.test')
  })

  it('offers no toggle switch and no way to deactivate oneself', async () => {
    expect(await page.locator('.el-switch').count()).toBe(0)
    expect(await member('admin@example.test').getByRole('button', { name: 'Deactivated' }).isDisabled()).toBe(true)
    expect(await member('admin@example.test').getByRole('combobox').count()).toBe(0)
  })
})
