// A recordist creates a capture session and drops a folder of takes on it in
// Debian's Chromium: each file shows its own progress and state, refused files
// say why, and the measured numbers appear as the takes are analysed.
import fs from 'node:fs'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'
import { soxWav } from '../helpers/uploads'

const env = useBrowserServer()

describe('capture session upload in the browser', () => {
  it('uploads a folder of takes in parallel and shows their measurements', async () => {
    const dir = path.join(env.server.dir, 'card')
    const files = [
      soxWav(path.join(dir, 'REC0001.WAV'), { rate: 48000, bits: 24, channels: 2, seconds: 4, synth: ['sine', '50'] }),
      soxWav(path.join(dir, 'REC0002.WAV'), { rate: 44100, bits: 16, channels: 1, seconds: 3, synth: ['pinknoise'] }),
      soxWav(path.join(dir, 'REC0003.WAV'), {
        rate: 96000,
        bits: 24,
        channels: 1,
        seconds: 2,
        synth: ['sine', '9000'],
      }),
    ]
    const notWav = path.join(dir, 'NOTES.WAV')
    fs.writeFileSync(notWav, 'not audio at all, just a text file someone renamed')

    const page = await env.browser.newPage({ viewport: { width: 1400, height: 1000 } })
    await signInThroughForm(page, env.server.url, 'recordist@example.test')
    await page.goto(`${env.server.url}/captures`)
    await page.locator('[data-test=new-session]').click()
    await page.locator('input[name=title]').fill('Bench sweep, browser test')
    await page.locator('input[name=location]').fill('Test bench')
    await page.locator('input[name=pickup]').fill('Telephone pickup coil')
    await page.locator('[data-test=save-session]').click()
    await page.waitForURL(/\/captures\/\d+$/)
    await expect.poll(() => page.locator('[data-test=session-facts]').innerText()).toContain('Telephone pickup coil')
    await expect.poll(() => page.locator('[data-test=capture-caution]').innerText()).toMatch(/electrical codes/)

    await page.locator('[data-test=file-input]').setInputFiles([...files, notWav])
    const queue = page.locator('[data-test=upload-queue] li')
    await expect.poll(() => queue.count()).toBe(4)
    // Each file ends with its own state; the renamed text file is refused with the reason.
    await expect
      .poll(() => page.locator('[data-test=upload-queue] li[data-state=done]').count(), { timeout: 30_000 })
      .toBe(3)
    await expect
      .poll(() => page.locator('[data-test=upload-queue] li[data-state=failed]').innerText())
      .toMatch(/NOTES\.WAV: .*RIFF/)

    // Takes move to Ready and show their integrated loudness.
    const rows = page.locator('[data-test=log-sheet] [data-test=log-row]')
    await expect.poll(() => rows.count(), { timeout: 30_000 }).toBe(3)
    await expect
      .poll(() => page.locator('[data-test=log-sheet] [data-status=ready]').count(), { timeout: 60_000 })
      .toBe(3)
    const text = await page.locator('[data-test=log-sheet]').innerText()
    expect(text).toMatch(/LUFS/)
    expect(text).toMatch(/50 Hz/)
    expect(text).toContain('REC0003.WAV')
    // The one-line summary of the batch: three measured, the renamed text file refused.
    await expect
      .poll(() => page.locator('[data-test=batch-summary]').innerText(), { timeout: 30_000 })
      .toMatch(/^3 of 3 measured( · .+)? · 1 refused$/)
    await screenshot(page, 'capture-upload')
    await page.close()
  })
})
