// The library and the listening bench in Debian's Chromium: a long take draws
// from the server's peaks while only a little of its audio is fetched, plays,
// takes a listening note at a time position, and searches survive a reload.
import path from 'node:path'
import fs from 'node:fs'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
let page: Page
let longId: number
let longBytes: number
const ids: Record<string, number> = {}

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec: Client = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Browser library capture' })
  const dir = path.join(server.dir, 'files')
  // Ten minutes at 48 kHz, 16-bit mono: 57.6 MB of audio.
  const long = soxWav(path.join(dir, 'long.wav'), { rate: 48000, bits: 16, seconds: 600, synth: ['pinknoise'] })
  longBytes = fs.statSync(long).size
  longId = (await uploadTake(rec, s.id, long, 'long_room_tone.wav')).body.take.id
  for (const [name, synth] of [
    ['hum_fifty', ['sine', '50']],
    ['whine_high', ['sine', '12000']],
    ['hum_sixty', ['sine', '60']],
  ] as const) {
    const f = soxWav(path.join(dir, `${name}.wav`), { seconds: 3, synth: [...synth] })
    ids[name] = (await uploadTake(rec, s.id, f, `${name}.wav`)).body.take.id
  }
  for (const id of [longId, ...Object.values(ids)]) await waitForTake(rec, id, 120_000)
  browser = await launchBrowser()
  const context = await browser.newContext({ viewport: { width: 1440, height: 1000 } })
  page = await context.newPage()
  await signInThroughForm(page, server.url, 'designer@example.test')
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

describe('listening bench', () => {
  it('draws a long take from its peaks while fetching far fewer audio bytes than the file holds', async () => {
    // Bytes that really arrived, from Chromium's own network events (a media
    // element asks for bytes=0- and then reads only what it needs).
    let audioBytes = 0
    const audioRequests = new Set<string>()
    const cdp = await page.context().newCDPSession(page)
    await cdp.send('Network.enable')
    cdp.on('Network.requestWillBeSent', (e) => {
      if (e.request.url.includes(`/api/takes/${longId}/audio`)) audioRequests.add(e.requestId)
    })
    cdp.on('Network.dataReceived', (e) => {
      if (audioRequests.has(e.requestId)) audioBytes += e.dataLength
    })
    await page.goto(`${server.url}/takes/${longId}`)
    await page.locator('[data-test=waveform] canvas').first().waitFor({ timeout: 20_000 })
    await expect.poll(() => page.locator('[data-test=integrated]').innerText()).toMatch(/LUFS/)
    await page.waitForTimeout(1500)
    expect(audioRequests.size).toBeGreaterThan(0)
    expect(audioBytes).toBeLessThan(longBytes / 10)
    await cdp.detach()
  })

  it('plays and moves the playhead', async () => {
    const before = await page.locator('[data-test=playhead]').innerText()
    expect(before.startsWith('0:00.0')).toBe(true)
    await page.locator('[data-test=play]').click()
    await expect
      .poll(() => page.locator('[data-test=playhead]').innerText(), { timeout: 15_000 })
      .not.toMatch(/^0:00\.0/)
    await page.locator('[data-test=play]').click()
    await expect(page.locator('[data-test=now-playing-caution]').innerText()).resolves.toMatch(/Start quiet/)
  })

  it('adds a listening note at the playhead (Ctrl+Enter) and marks it with the author initials on the field strip', async () => {
    await page.getByLabel('Listening note', { exact: true }).click()
    await page.keyboard.type('Hiss rises here <b>not bold</b>')
    await page.keyboard.press('Control+Enter')
    await expect
      .poll(() => page.locator('[data-test=discussion]').innerText())
      .toContain('Hiss rises here <b>not bold</b>')
    await expect.poll(() => page.locator('[data-test=note-mark]').count()).toBe(1)
    await expect(page.locator('[data-test=note-mark]').first().innerText()).resolves.toBe('DH')
    await screenshot(page, 'listening-bench')
  })
})

describe('library', () => {
  it('searches and filters, and the URL brings the same results back after a reload', async () => {
    await page.goto(`${server.url}/library`)
    const rows = () =>
      page
        .locator('[data-test=library-table] [data-take]')
        .evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-take'))).sort((a, b) => a - b))
    await expect.poll(rows).toHaveLength(4)

    await page.locator('input[name=q]').fill('hum')
    await expect.poll(rows).toEqual([ids.hum_fifty, ids.hum_sixty].sort((a, b) => a - b))
    await page.locator('[data-test=filter-hum]').click()
    await page.locator('.el-select-dropdown__item', { hasText: '60 Hz' }).click()
    await expect.poll(rows).toEqual([ids.hum_sixty])
    await expect.poll(() => new URL(page.url()).searchParams.get('hum')).toBe('60')
    expect(new URL(page.url()).searchParams.get('q')).toBe('hum')

    await page.reload()
    await expect.poll(rows).toEqual([ids.hum_sixty])
    await expect.poll(() => page.locator('input[name=q]').inputValue()).toBe('hum')
    await screenshot(page, 'library-filtered')
  })
})
