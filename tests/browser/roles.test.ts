// Each demo role signs in through the real form in Debian's Chromium and sees
// exactly the areas the shared permission table gives it.
import { describe, expect, it } from 'vitest'
import { ROLES, can } from '@shared/permissions'
import { AREAS } from '@/router/areas'
import { screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'

const env = useBrowserServer()

describe('sign-in page', () => {
  it('shows the demo accounts while demo mode is on', async () => {
    const page = await env.browser.newPage()
    await page.goto(`${env.server.url}/library`)
    await page.waitForURL(/\/sign-in/)
    await expect.poll(() => page.locator('[data-test=demo-accounts]').innerText()).toContain('strayfield-demo')
    await screenshot(page, 'sign-in')
    await page.close()
  })

  it('says what was wrong with a bad password', async () => {
    const page = await env.browser.newPage()
    await page.goto(`${env.server.url}/sign-in`)
    await page.locator('input[name=email]').fill('admin@example.test')
    await page.locator('input[name=password]').fill('definitely-wrong')
    await page.locator('[data-test=sign-in]').click()
    await expect.poll(() => page.locator('.el-alert').innerText()).toMatch(/do not match/)
    await page.close()
  })
})

describe('each role sees its own areas', () => {
  for (const role of ROLES) {
    it(`${role}`, async () => {
      const context = await env.browser.newContext({ viewport: { width: 1400, height: 900 } })
      const page = await context.newPage()
      await signInThroughForm(page, env.server.url, `${role}@example.test`)
      await page.locator('nav[aria-label=Areas] a').first().waitFor()
      const shown = await page
        .locator('nav[aria-label=Areas] a')
        .evaluateAll((as) => as.map((a) => a.getAttribute('data-area')))
      const expected = AREAS.filter((a) => can(role, a.permission)).map((a) => a.name)
      expect(shown).toEqual(expected)

      // A view outside the role is refused by the router guard, not just hidden.
      const denied = AREAS.find((a) => !can(role, a.permission))
      if (denied) {
        await page.goto(`${env.server.url}${denied.path}`)
        await expect.poll(() => page.locator('h1').first().innerText()).toBe('Not for your role')
      }
      await page.goto(
        `${env.server.url}${expected.length ? AREAS.find((a) => a.name === expected[expected.length - 1])!.path : '/'}`,
      )
      await page.locator('h1').first().waitFor()
      await screenshot(page, `role-${role}`)
      await context.close()
    })
  }
})
