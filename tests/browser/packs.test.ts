// A designer turns library takes into a pack and builds and publishes a version;
// a producer finds and follows it; someone without an account opens a share link.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser } from 'playwright-core'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
let packId = 0

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Pack sources' })
  for (const [name, synth] of [
    ['hum_a', ['sine', '50']],
    ['whine_b', ['sine', '7000']],
  ] as const) {
    const f = soxWav(path.join(server.dir, `${name}.wav`), { seconds: 3, synth: [...synth] })
    await waitForTake(rec, (await uploadTake(rec, s.id, f, `${name}.wav`)).body.take.id)
  }
  browser = await launchBrowser()
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

describe('packs in the browser', () => {
  it('designer: library selection → pack → build → publish', async () => {
    const page = await browser.newPage({ viewport: { width: 1440, height: 1000 } })
    await signInThroughForm(page, server.url, 'designer@example.test')
    await page.goto(`${server.url}/packs`)
    await page.locator('input[name=pack-name]').fill('Bench hums, volume one')
    await page.locator('[data-test=new-pack]').click()
    await page.waitForURL(/\/packs\/\d+$/)
    packId = Number(new URL(page.url()).pathname.split('/').pop())

    await page.goto(`${server.url}/library`)
    await expect.poll(() => page.locator('[data-test=library-table] [data-take]').count()).toBe(2)
    await page.getByLabel('Select every take on this page').check()
    await page.locator('[data-test=add-to-pack] .el-select').click()
    await page.locator('.el-select-dropdown__item', { hasText: 'Bench hums, volume one' }).click()
    await page.locator('[data-test=add-to-pack] button').click()
    // The notice stands beside the button that added them (src/components/ui/notice.ts).
    await expect.poll(() => page.locator('[data-test=notice]').innerText()).toMatch(/2 items added/)

    await page.goto(`${server.url}/packs/${packId}`)
    await expect.poll(() => page.locator('[data-test=pack-items] [data-item]').count()).toBe(2)
    await page.locator('[data-test=build]').click()
    await expect
      .poll(() => page.locator('[data-test=builds] [data-build]').first().getAttribute('data-status'), {
        timeout: 60_000,
      })
      .toBe('done')
    // After the build each item shows its loudness out of the renderer.
    await expect.poll(() => page.locator('[data-test=pack-items]').innerText()).toMatch(/→ −1[78]\.\d LUFS/)
    await page.locator('[data-test=publish]').click()
    await page.locator('[data-test=publish-confirm]').click()
    await expect.poll(() => page.locator('[data-test=builds]').innerText()).toMatch(/published/i)
    await screenshot(page, 'pack-editor')
    await page.close()
  })

  it('producer: sees the published pack, can follow it and download it', async () => {
    const page = await browser.newPage({ viewport: { width: 1440, height: 900 } })
    await signInThroughForm(page, server.url, 'producer@example.test')
    await page.goto(`${server.url}/packs`)
    await expect.poll(() => page.locator('[data-test=pack-list]').innerText()).toContain('Bench hums, volume one')
    await page.locator(`[data-pack="${packId}"]`).click()
    await page.locator('[data-test=follow]').click()
    await expect.poll(() => page.locator('[data-test=follow]').innerText()).toMatch(/Following/)
    const href = await page.locator('[data-test=download]').getAttribute('href')
    expect(href).toMatch(/\/api\/pack-builds\/\d+\/download/)
    const res = await page.request.get(`${server.url}${href}`, { headers: { Range: 'bytes=0-3' } })
    expect(res.status()).toBe(206)
    expect((await res.body()).toString('latin1')).toBe('PK\u0003\u0004')
    await screenshot(page, 'pack-producer')
    await page.close()
  })

  it('anyone with a share link sees the pack and can download it', async () => {
    const designer = await signedIn(server.url, 'designer')
    const build = (await designer.get(`/api/packs/${packId}/builds`)).body.builds[0]
    const link = (
      await designer.post(`/api/pack-builds/${build.id}/share-links`, {
        expiresAt: new Date(Date.now() + 864e5).toISOString(),
        maxDownloads: 3,
      })
    ).body.link
    const context = await browser.newContext()
    const page = await context.newPage()
    await page.goto(link.url.replace(/^https?:\/\/[^/]+/, server.url))
    await expect.poll(() => page.locator('[data-test=share]').innerText()).toContain('Bench hums, volume one')
    expect(await page.locator('[data-test=share-download]').getAttribute('href')).toMatch(/\/api\/share\/.+\/download/)
    await screenshot(page, 'pack-share')
    await context.close()
  })
})
