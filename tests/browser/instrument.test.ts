// The instrument tools on the listening bench, used as a designer uses them:
// find one-shots in a burst train, reject one, adjust one into the selection,
// accept one as a region, accept the rest at once; find loops in a hum.
// Screenshots at desktop and phone sizes.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { encodeWav } from '../../server/audio/wav-writer'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { burstTrain, humWithHarmonics } from '../audio/instrument-signals'

let server: TestServer
let browser: Browser
let page: Page
let burstId: number
let humId: number
const bursts = burstTrain(4, 48000, 6)

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Instrument bench capture' })
  const file = (name: string, x: Float32Array) => {
    const f = path.join(server.dir, name)
    fs.writeFileSync(f, encodeWav([x], { sampleRate: 48000, channels: 1, encoding: 'pcm', bitsPerSample: 24 }))
    return f
  }
  burstId = (await uploadTake(rec, s.id, file('bursts.wav', bursts.samples), 'relay_bursts.wav')).body.take.id
  humId = (await uploadTake(rec, s.id, file('hum.wav', humWithHarmonics(3, 48000)), 'bench_hum.wav')).body.take.id
  for (const id of [burstId, humId]) await waitForTake(rec, id, 120_000)
  browser = await launchBrowser()
  page = await (await browser.newContext({ viewport: { width: 1440, height: 900 } })).newPage()
  await signInThroughForm(page, server.url, 'designer@example.test')
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

async function openBench(id: number) {
  await page.goto(`${server.url}/takes/${id}`)
  await page.locator('[data-test=waveform] canvas').first().waitFor({ timeout: 20_000 })
}
const rows = () => page.locator('[data-test=proposal]')
const savedRegions = () => page.getByRole('list', { name: 'Saved regions' }).getByRole('listitem')

describe('instrument tools on the bench', () => {
  it('proposes one-shots at the bursts; reject, adjust and accept each do what they say', async () => {
    await openBench(burstId)
    await page.getByRole('button', { name: 'Find one-shots' }).click()
    await rows().first().waitFor()
    const count = await rows().count()
    expect(count).toBe(bursts.onsets.length)
    expect(await page.locator('[data-test=strip-proposal]').count()).toBe(count) // dashed on the strip's lane
    await screenshot(page, 'instrument-one-shots-desktop')

    await page.getByRole('button', { name: 'Reject One-shot 1', exact: true }).click()
    expect(await rows().count()).toBe(count - 1)

    // Adjust: the proposal becomes the selection, where its handles can move it (names stay as proposed).
    const second = rows().first()
    const range = (await second.locator('.num').innerText()).split('–')
    await page.getByRole('button', { name: 'Adjust One-shot 2 in the selection', exact: true }).click()
    expect(await page.locator('[data-test=selection-start]').innerText()).toBe(range[0])
    expect(await page.locator('[data-test=selection-end]').innerText()).toBe(range[1])
    expect(await rows().count()).toBe(count - 2)

    // Accept with the keyboard: focus the button, press Enter.
    await page.getByRole('button', { name: 'Accept One-shot 3 as a region', exact: true }).focus()
    await page.keyboard.press('Enter')
    await expect.poll(() => savedRegions().count(), { timeout: 10_000 }).toBe(1)
    expect(await savedRegions().first().innerText()).toContain('One-shot 3')
    expect(await rows().count()).toBe(count - 3)

    await page.locator('[data-test=accept-all]').click()
    await expect.poll(() => savedRegions().count(), { timeout: 20_000 }).toBe(count - 2)
    await expect.poll(() => rows().count()).toBe(0)
  })

  it('proposes clean loops in a hum, at phone size too', async () => {
    await openBench(humId)
    await page.getByRole('button', { name: 'Find loops' }).click()
    await rows().first().waitFor()
    expect(await rows().count()).toBeGreaterThan(0)
    expect(await rows().first().innerText()).toContain('clean')
    await screenshot(page, 'instrument-loops-desktop')
    await page.setViewportSize({ width: 390, height: 844 })
    await page.locator('[data-test=proposals]').scrollIntoViewIfNeeded()
    await screenshot(page, 'instrument-loops-phone')
    const panel = (await page.locator('[data-test=proposals]').boundingBox())!
    expect(panel.x + panel.width).toBeLessThanOrEqual(390)
  })
})
