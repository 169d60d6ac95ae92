// The Content-Security-Policy (style-src and font-src 'self', no inline
// styles or scripts) does not break the built client: each area renders in
// Debian's Chromium at desktop and phone sizes with no CSP violation reported
// by the browser (the `securitypolicyviolation` event, CSP Level 3 §5.3).
import { describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { AREAS } from '@/router/areas'
import { screenshot, useBrowserServer } from '../helpers/browser'
import { signedIn } from '../helpers/server'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'
import path from 'node:path'

const env = useBrowserServer()

/** Records every violation the page reports, from the first script on. */
async function watchViolations(page: Page): Promise<() => Promise<string[]>> {
  await page.addInitScript(() => {
    const seen: string[] = []
    ;(window as unknown as { __csp: string[] }).__csp = seen
    document.addEventListener('securitypolicyviolation', (e) =>
      seen.push(`${e.violatedDirective} ${e.blockedURI} ${e.sample}`),
    )
  })
  // zod probes once whether eval is allowed (`Function('')` in a try, then runs without it): expected, harmless.
  return async () =>
    (await page.evaluate(() => (window as unknown as { __csp: string[] }).__csp)).filter(
      (v) => !v.startsWith('script-src eval'),
    )
}

async function signIn(page: Page, email: string) {
  await page.goto(`${env.server.url}/sign-in`)
  await page.locator('input[name=email]').click()
  await page.keyboard.type(email)
  await page.locator('input[name=password]').click()
  await page.keyboard.press('ControlOrMeta+a')
  await page.keyboard.type('strayfield-demo')
  await page.getByRole('button', { name: /sign in/i }).click()
  await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'))
}

describe('Content-Security-Policy and the built client', () => {
  for (const [label, viewport] of [
    ['desktop', { width: 1440, height: 900 }],
    ['phone', { width: 390, height: 844 }],
  ] as const) {
    it(`renders every admin area without a violation (${label})`, async () => {
      const context = await env.browser.newContext({ viewport })
      const page = await context.newPage()
      const violations = await watchViolations(page)
      await signIn(page, 'admin@example.test')
      for (const area of AREAS) {
        await page.goto(`${env.server.url}${area.path}`)
        await page.locator('h1').first().waitFor()
        // Styles applied: Element Plus's own stylesheet sets the body's font from its variables.
        expect(await page.evaluate(() => getComputedStyle(document.body).fontFamily)).not.toBe('')
        await screenshot(page, `csp-${label}-${area.name}`)
      }
      expect(await violations()).toEqual([])
      await context.close()
    }, 120_000)
  }

  it('renders the listening bench (waveform, spectrogram) without a violation', async () => {
    const recordist = await signedIn(env.server.url, 'recordist')
    const wav = soxWav(path.join(env.server.dir, 'csp.wav'), { seconds: 3, rate: 16000, bits: 16 })
    const up = await uploadTake(recordist, (await createSession(recordist)).id, wav, 'csp.wav')
    expect(up.status).toBe(201)
    expect((await waitForTake(recordist, up.body.take.id)).status).toBe('ready')
    const context = await env.browser.newContext({ viewport: { width: 1440, height: 900 } })
    const page = await context.newPage()
    const violations = await watchViolations(page)
    await signIn(page, 'designer@example.test')
    await page.goto(`${env.server.url}/takes/${up.body.take.id}`)
    await page.locator('h1').first().waitFor()
    await page.waitForTimeout(1500) // the waveform and the spectrogram image load after the page
    await screenshot(page, 'csp-desktop-bench')
    expect(await violations()).toEqual([])
    await context.close()
  }, 120_000)
})
