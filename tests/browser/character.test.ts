// Suggested tags and "more like this" in Debian's Chromium, at desktop and phone
// sizes: a designer accepts the suggestions on the bench, finds the whines with
// the library's character filter, opens "more like this" on a row and sees the
// other whines listed first; bulk accept from the selection bar.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser } from 'playwright-core'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { encodeWav } from '../../server/audio/wav-writer'
import { RATE, soundMember } from '../audio/character-signals'

let server: TestServer
let browser: Browser
const ids: Record<string, number> = {}

const wav = (x: Float32Array) => encodeWav([x], { sampleRate: RATE, channels: 1, encoding: 'pcm', bitsPerSample: 24 })

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  browser = await launchBrowser()
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Character capture' })
  const takes: [string, string, number][] = [
    ['whine1', 'whine', 1],
    ['whine2', 'whine', 2],
    ['whine3', 'whine', 3],
    ['hiss1', 'hiss', 1],
    ['crackle1', 'crackle', 1],
    ['motor1', 'motor', 1],
  ]
  for (const [key, family, seed] of takes)
    ids[key] = (await uploadTake(rec, s.id, wav(soundMember(family, seed)), `${key}.wav`)).body.take.id
  for (const id of Object.values(ids)) await waitForTake(rec, id, 120_000)
}, 240_000)

afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

describe('character on the bench and in the library', () => {
  it('desktop: the bench suggests, the designer accepts; the filter and more like this find the whines', async () => {
    const page = await browser.newPage({ viewport: { width: 1440, height: 900 } })
    await signInThroughForm(page, server.url, 'designer@example.test')
    await page.goto(`${server.url}/takes/${ids.whine1}`)
    const cue = page.locator('[data-test=suggested-tag][data-tag=whine]')
    await cue.waitFor()
    await screenshot(page, 'character-bench-suggested')
    await cue.getByRole('button', { name: 'Add tag whine' }).click()
    await page.locator('[data-test=suggested-tags]').waitFor({ state: 'detached' })
    await expect(page.locator('.chip.tag', { hasText: 'whine' }).first().isVisible()).resolves.toBe(true)

    await page.goto(`${server.url}/library`)
    await page.locator('[data-test=filter-character]').selectOption('whine')
    await page.waitForFunction(() => document.querySelector('[data-test=library-total]')?.textContent?.startsWith('3 '))
    const row = page.locator(`[data-take="${ids.whine2}"]`)
    await screenshot(page, 'character-library-filtered')
    await row.getByRole('button', { name: 'More like this' }).click()
    const list = page.locator('[data-test=similar-list]')
    await list.locator('[data-test=similar-item]').first().waitFor()
    const listed = await list
      .locator('[data-test=similar-item]')
      .evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-take'))))
    expect(listed.slice(0, 2).sort()).toEqual([ids.whine1, ids.whine3].sort())
    await screenshot(page, 'character-library-more-like-this')
    await page.keyboard.press('Escape')
    await list.waitFor({ state: 'detached' })
    await page.close()
  })

  it('phone: selects takes and accepts their suggested tags from the selection bar', async () => {
    const page = await browser.newPage({ viewport: { width: 390, height: 844 } })
    await signInThroughForm(page, server.url, 'designer@example.test')
    await page.goto(`${server.url}/library`)
    for (const key of ['hiss1', 'crackle1'])
      await page.locator(`[data-take="${ids[key]}"] [data-test=row-select]`).check()
    const accept = page.locator('[data-test=bulk-accept-suggested]')
    await accept.waitFor()
    await screenshot(page, 'character-phone-bulk-accept')
    await accept.click()
    await page.locator(`[data-take="${ids.hiss1}"] .tag`, { hasText: 'hiss' }).waitFor()
    await page.locator(`[data-take="${ids.crackle1}"] .tag`, { hasText: 'crackle' }).waitFor()
    await page.locator(`[data-take="${ids.motor1}"] [data-test=more-like-this]`).click()
    await page.locator('[data-test=similar-list] [data-test=similar-item]').first().waitFor()
    await screenshot(page, 'character-phone-more-like-this')
    await page.close()
  })
})
