// A designer picks an export profile in the pack editor with the mouse and then
// the keyboard, sees the output names shortened to the profile's limit in the
// live preview, saves, builds, and the built zip's manifest lists the profile.
// The zip is read by Info-ZIP's unzip (Debian). Desktop 1440 × 900 and phone 390 × 844.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
let packId = 0

const LONG = 'Switching regulator whine under heavy load, variant'

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Profile sources' })
  const f = soxWav(path.join(server.dir, 'whine.wav'), { seconds: 2, channels: 2, synth: ['sine', '3000'] })
  const takeId = (await uploadTake(rec, s.id, f, 'whine.wav')).body.take.id
  await waitForTake(rec, takeId)
  const designer = await signedIn(server.url, 'designer')
  packId = (await designer.post('/api/packs', { name: 'Regulator whines' })).body.pack.id
  await designer.post(`/api/packs/${packId}/items/batch`, {
    items: ['one', 'two', 'three'].map((w) => ({ takeId, name: `${LONG} ${w}` })),
  })
  browser = await launchBrowser()
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

const previewNames = async (page: Page) =>
  (await page.locator('[data-test=naming-preview] [data-test=preview-name] .out').allInnerTexts()).map((t) =>
    t.trim().replace(/\.wav$/, ''),
  )

describe('export profile in the pack editor', () => {
  it('desktop: a preset by mouse, the next by keyboard, names shortened in the preview, build, manifest', async () => {
    const page = await browser.newPage({ viewport: { width: 1440, height: 900 } })
    await signInThroughForm(page, server.url, 'designer@example.test')
    await page.goto(`${server.url}/packs/${packId}`)
    const picker = page.locator('[data-test=export-profile]')
    await picker.scrollIntoViewIfNeeded()
    // Before: the names are long.
    await expect.poll(async () => Math.max(...(await previewNames(page)).map((n) => n.length))).toBeGreaterThan(40)

    // Mouse: the compact preset (24 characters).
    await picker.locator('[data-test=profile-compact-hardware]').click()
    await expect.poll(async () => (await previewNames(page)).every((n) => n.length <= 24)).toBe(true)
    expect(await page.locator('[data-test=naming-preview]').innerText()).toContain('shortened to 24 characters')
    expect(await page.locator('[data-test=naming-preview]').innerText()).toContain('from Switching_regulator_whine')

    // Keyboard: the arrow key moves to the next choice of the radio group, the 16-character preset.
    await picker.locator('[data-test=profile-compact-hardware] input').focus()
    await page.keyboard.press('ArrowRight')
    await expect.poll(() => picker.locator('[data-test=profile-pocket-sampler] input').isChecked()).toBe(true)
    await expect.poll(async () => (await previewNames(page)).every((n) => n.length <= 16)).toBe(true)
    const names = await previewNames(page)
    expect(new Set(names.map((n) => n.toLowerCase())).size).toBe(3)
    await screenshot(page, 'pack-profile-desktop')

    await page.locator('[data-test=save-pack]').click()
    await expect.poll(() => page.locator('[data-test=delivery-format]').innerText()).toContain('44.1 kHz, 16-bit, mono')
    await page.locator('[data-test=build]').click()
    await expect
      .poll(() => page.locator('[data-test=builds] [data-build]').first().getAttribute('data-status'), {
        timeout: 60_000,
      })
      .toBe('done')

    // The zip's manifest lists the profile (Info-ZIP unzip -p prints one entry).
    const designer = await signedIn(server.url, 'designer')
    const build = (await designer.get(`/api/packs/${packId}/builds`)).body.builds[0]
    const res = await page.request.get(`${server.url}/api/pack-builds/${build.id}/download`)
    const zip = path.join(server.dir, 'profile-browser.zip')
    fs.writeFileSync(zip, await res.body())
    const manifest = JSON.parse(execFileSync('unzip', ['-p', zip, 'manifest.json'], { encoding: 'utf8' }))
    expect(manifest.profile).toMatchObject({
      preset: 'pocket-sampler',
      sampleRate: 44100,
      channels: 'mono',
      bitDepth: 16,
      maxNameLength: 16,
    })
    expect(manifest.items.map((i: { file: string }) => i.file.replace(/\.wav$/, ''))).toEqual(names)
    await page.close()
  })

  it('phone: the picker fits the screen and a preset can be chosen', async () => {
    const page = await browser.newPage({ viewport: { width: 390, height: 844 } })
    await signInThroughForm(page, server.url, 'designer@example.test')
    await page.goto(`${server.url}/packs/${packId}`)
    const picker = page.locator('[data-test=export-profile]')
    await picker.scrollIntoViewIfNeeded()
    await picker.locator('[data-test=profile-desktop-instrument]').click()
    await expect.poll(() => page.locator('[data-test=naming-preview]').innerText()).toContain('other/')
    const wide = await page.evaluate(() => document.documentElement.scrollWidth)
    expect(wide).toBeLessThanOrEqual(390)
    await picker.screenshot({ path: path.resolve('tests/.artifacts/screenshots/pack-profile-phone.png') })
    await page.close()
  })
})
