// The shortest selection the bench lets go anywhere: 20 ms (MIN_SELECTION_SECONDS in shared/schemas/common.ts,
// common practice for the shortest useful one-shot; the server refuses shorter regions, items and exports).
// In Debian's Chromium, paused: [ then ] at the same playhead make a 10 ms selection, which says why it
// cannot be saved, added or exported; moving on and pressing ] again makes one that can. A pack item
// shorter than one 400 ms gating block (ITU-R BS.1770-4) says its loudness is too short to measure.
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'
import { signedIn } from '../helpers/server'

const env = useBrowserServer()

describe('the shortest selection', () => {
  it('a 10 ms selection is refused with its reason on the bench; a short pack item says its loudness cannot be measured', async () => {
    const rec = await signedIn(env.server.url, 'recordist')
    const designer = await signedIn(env.server.url, 'designer')
    const s = await createSession(rec, { title: 'Shortest cut capture' })
    const file = soxWav(path.join(env.server.dir, 'files', 'hum70.wav'), { seconds: 4, synth: ['sine', '70'] })
    const takeId = (await uploadTake(rec, s.id, file, 'bench_hum.wav')).body.take.id
    await waitForTake(rec, takeId, 120_000)
    const pack = (await designer.post('/api/packs', { name: 'Shortest cuts' }).expect(201)).body.pack

    const page = await env.browser.newPage({ viewport: { width: 1440, height: 900 } })
    page.setDefaultTimeout(15_000)
    await signInThroughForm(page, env.server.url, 'designer@example.test')
    await page.goto(`${env.server.url}/takes/${takeId}`)
    const wave = page.locator('[data-test=waveform]')
    await wave.locator('canvas').first().waitFor({ timeout: 20_000 })
    await page.locator('[data-test=add-to-pack] .el-select').first().click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'Shortest cuts' }).click()
    await wave.scrollIntoViewIfNeeded()
    const w = (await wave.boundingBox())!
    // A click on the waveform seeks, and takes the keys back from the pack picker.
    // The picker keeps the keyboard until something else is clicked: the page's title, as a person would.
    await page.locator('h1').first().click()
    await page.mouse.click(w.x + w.width * 0.5, w.y + w.height / 2)
    await expect
      .poll(async () => (await page.locator('[data-test=playhead]').innerText()).startsWith('0:00.0'))
      .toBe(false)

    // Paused: [ and ] at one playhead leave the 10 ms the bench keeps between the ends.
    await page.keyboard.press('[')
    await page.keyboard.press(']')
    await expect.poll(() => page.locator('[data-test=selection-length]').innerText()).toBe('(10 ms)')
    const reason = page.locator('[data-test=selection-too-short]')
    await expect.poll(() => reason.innerText()).toContain('at least 20 ms')
    expect(await page.locator('[data-test=save-region]').isDisabled()).toBe(true)
    expect(await page.locator('[data-test=add-to-pack-button]').isDisabled()).toBe(true)
    expect(await page.locator('[data-test=quick-export-download]').isDisabled()).toBe(true)
    // R says why instead of opening the name box.
    await page.keyboard.press('r')
    expect(await page.locator('[data-test=region-name]').count()).toBe(0)
    await screenshot(page, 'selection-too-short-1440')

    // On by a tenth of the view, ] again: long enough for all three.
    await page.keyboard.press('ArrowRight')
    await page.keyboard.press(']')
    await expect.poll(() => reason.count()).toBe(0)
    expect(await page.locator('[data-test=save-region]').isDisabled()).toBe(false)
    expect(await page.locator('[data-test=quick-export-download]').isDisabled()).toBe(false)
    // The bench's spectrogram images count against the member's three heavy tasks (429 beyond): let them land first.
    await page.waitForLoadState('networkidle')
    await page.locator('[data-test=add-to-pack-button]').click()
    await expect
      .poll(async () => (await designer.get(`/api/packs/${pack.id}`).expect(200)).body.pack.items.length, {
        timeout: 15_000,
      })
      .toBe(1)
    const [item] = (await designer.get(`/api/packs/${pack.id}`)).body.pack.items
    expect(item.endSeconds - item.startSeconds).toBeGreaterThanOrEqual(0.02)

    // 50 ms: long enough to keep, too short for an integrated loudness (one 400 ms block, BS.1770-4).
    const tick = (
      await designer
        .post(`/api/packs/${pack.id}/items`, { takeId, startSeconds: 1, endSeconds: 1.05, name: 'Tick' })
        .expect(201)
    ).body.item
    for (const viewport of [
      { width: 1440, height: 900 },
      { width: 390, height: 844 },
    ]) {
      await page.setViewportSize(viewport)
      await page.goto(`${env.server.url}/packs/${pack.id}`)
      const row = page.locator(`[data-test=pack-items] .row[data-item="${tick.id}"]`)
      await expect.poll(() => row.locator('.lufs').innerText()).toContain('too short to measure')
      expect(await row.locator('.lufs').innerText()).not.toContain('…')
      expect(await row.locator('.len').innerText()).toContain('50 ms')
      await screenshot(page, `pack-short-item-${viewport.width}`)
    }
    await page.close()
  }, 120_000)
})
