// From a sweep to takes, and loops heard cycling, used as a designer uses them:
// ask for split proposals, see them dashed on the field strip, drag an edge,
// reject one with the keyboard, accept one and then the rest; the new takes
// show on the capture session's logging sheet. Then a loop accepted from a hum
// is cycled: its position wraps from the end back to the start.
// Screenshots at desktop and phone sizes.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { encodeWav } from '../../server/audio/wav-writer'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { buildSweep } from '../audio/split-signals'
import { burstTrain, humWithHarmonics } from '../audio/instrument-signals'

let server: TestServer
let browser: Browser
let page: Page
let sessionId: number
let sweepId: number
let humId: number
let burstId: number
let packId: number
const bursts = burstTrain(4, 48000, 6)
const sweep = buildSweep(31, 5, [true, false, true, false], 48000)

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  sessionId = (await createSession(rec, { title: 'Shelf sweep capture' })).id
  const file = (name: string, x: Float32Array) => {
    const f = path.join(server.dir, name)
    fs.writeFileSync(f, encodeWav([x], { sampleRate: 48000, channels: 1, encoding: 'pcm', bitsPerSample: 24 }))
    return f
  }
  sweepId = (await uploadTake(rec, sessionId, file('sweep.wav', sweep.samples), 'shelf_sweep.wav')).body.take.id
  humId = (await uploadTake(rec, sessionId, file('hum.wav', humWithHarmonics(3, 48000)), 'loop_hum.wav')).body.take.id
  burstId = (await uploadTake(rec, sessionId, file('bursts.wav', bursts.samples), 'relay_bursts.wav')).body.take.id
  for (const id of [sweepId, humId, burstId]) await waitForTake(rec, id, 120_000)
  const designer = await signedIn(server.url, 'designer')
  packId = (await designer.post('/api/packs', { name: 'Relay clicks, set one' })).body.pack.id
  browser = await launchBrowser()
  page = await (await browser.newContext({ viewport: { width: 1440, height: 900 } })).newPage()
  await signInThroughForm(page, server.url, 'designer@example.test')
}, 180_000)
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

async function openBench(id: number) {
  await page.goto(`${server.url}/takes/${id}`)
  await page.locator('[data-test=waveform] canvas').first().waitFor({ timeout: 20_000 })
}
const boxes = () => page.locator('[data-test=strip-proposal]')

describe('split proposals on the field strip', () => {
  it('shows the proposed takes dashed on the strip; drag, reject, accept; the takes reach the logging sheet', async () => {
    await openBench(sweepId)
    await page.getByRole('button', { name: 'Split sweep into takes' }).click()
    await boxes().first().waitFor({ timeout: 30_000 })
    expect(await boxes().count()).toBe(5)
    expect(await boxes().evaluateAll((els) => els.map((e) => e.getAttribute('data-kind')))).toEqual(
      Array(5).fill('split'),
    )
    const dashed = await boxes()
      .first()
      .evaluate((e) => getComputedStyle(e).borderTopStyle)
    expect(dashed).toBe('dashed')
    await screenshot(page, 'sweeps-proposals-desktop')

    // Drag the first proposal's end edge 40 px to the left: the proposal ends earlier.
    const end = page.locator('[data-test=proposal-end]').first()
    const before = Number(await end.getAttribute('aria-valuenow'))
    await end.scrollIntoViewIfNeeded()
    const box = (await end.boundingBox())!
    await page.mouse.move(box.x + box.width / 2, box.y + box.height / 2)
    await page.mouse.down()
    await page.mouse.move(box.x + box.width / 2 - 20, box.y + box.height / 2, { steps: 4 })
    await page.mouse.move(box.x + box.width / 2 - 40, box.y + box.height / 2, { steps: 4 })
    await page.mouse.up()
    const after = Number(await end.getAttribute('aria-valuenow'))
    expect(after).toBeLessThan(before - 0.1)
    // The edge also moves with the keyboard.
    await end.focus()
    await page.keyboard.press('ArrowLeft')
    expect(Number(await end.getAttribute('aria-valuenow'))).toBeLessThan(after)

    // Keyboard: the fifth box is focused and rejected with Delete.
    await page.getByRole('button', { name: /^Take 5,/ }).focus()
    await page.keyboard.press('Delete')
    expect(await boxes().count()).toBe(4)

    // Accept the first (as dragged), then all the rest at once.
    await page.getByRole('button', { name: /^Take 1,/ }).click()
    await page.locator('[data-test=strip-accept]').click()
    await page.locator('[data-test=split-made]').waitFor({ timeout: 30_000 })
    expect(await boxes().count()).toBe(3)
    await page.locator('[data-test=strip-accept-all]').click()
    await expect.poll(() => boxes().count(), { timeout: 30_000 }).toBe(0)
    expect(await page.locator('[data-test=split-made]').innerText()).toMatch(/^4 new takes/)

    await page.locator('[data-test=split-made] a').click()
    await page.waitForURL((u) => u.pathname === `/captures/${sessionId}`)
    const files = page.locator('[data-test=log-file]')
    await expect.poll(() => files.count(), { timeout: 20_000 }).toBeGreaterThanOrEqual(6)
    const names = await files.allInnerTexts()
    expect(
      names.filter((n) => /shelf_sweep (part \d of 3|from [\d.]+ s)\.wav/.test(n.replace(/\s+/g, ' '))),
    ).toHaveLength(4)
    await screenshot(page, 'sweeps-logsheet-desktop')
  })

  it('fits the proposal lane on a phone', async () => {
    await page.setViewportSize({ width: 390, height: 844 })
    await openBench(sweepId)
    await page.getByRole('button', { name: 'Split sweep into takes' }).click()
    await boxes().first().waitFor({ timeout: 30_000 })
    const lane = (await page.locator('[data-test=proposal-lane]').boundingBox())!
    expect(lane.x + lane.width).toBeLessThanOrEqual(390)
    await page.locator('[data-test=proposal-lane]').scrollIntoViewIfNeeded()
    await screenshot(page, 'sweeps-proposals-phone')
    await page.setViewportSize({ width: 1440, height: 900 })
  })
})

describe('loop audition', () => {
  it('cycles an accepted loop: the position wraps from the end back to the start; toggles off', async () => {
    await openBench(humId)
    await page.getByRole('button', { name: 'Find loops' }).click()
    await boxes().first().waitFor({ timeout: 30_000 })
    await page.getByRole('button', { name: 'Accept Loop 1 as a region' }).click()
    const cycle = page.locator('[data-test=loop-cycle]').first()
    await cycle.waitFor({ timeout: 10_000 })
    await cycle.click()
    const now = page.locator('[data-test=loop-time]')
    await now.waitFor({ timeout: 10_000 })
    expect(await cycle.getAttribute('aria-pressed')).toBe('true')
    // Sample the position until it has wrapped at least once, and see it go back. Both numbers are read in one
    // step: read one after the other, a wrap could fall between them and pair the new count with the old time.
    const seen: { s: number; w: number }[] = []
    await expect
      .poll(
        async () => {
          seen.push(
            await now.evaluate((el) => ({
              s: Number(el.getAttribute('data-seconds')),
              w: Number(el.getAttribute('data-wraps')),
            })),
          )
          return seen.at(-1)!.w
        },
        { timeout: 20_000, interval: 50 },
      )
      .toBeGreaterThanOrEqual(2)
    const wentBack = seen.some((x, i) => i > 0 && x.w > seen[i - 1].w && x.s < seen[i - 1].s)
    expect(wentBack, JSON.stringify(seen.slice(0, 40))).toBe(true)
    await screenshot(page, 'sweeps-loop-cycling-desktop')
    await cycle.click()
    await expect.poll(() => now.count()).toBe(0)
    expect(await cycle.getAttribute('aria-pressed')).toBe('false')
  })
})

describe('one-shots to a pack', () => {
  it('accepts one-shot proposals as one-shot regions and adds them all to a chosen pack in one step', async () => {
    await openBench(burstId)
    await page.getByRole('button', { name: 'Find one-shots' }).click()
    await boxes().first().waitFor({ timeout: 30_000 })
    const count = await boxes().count()
    expect(count).toBe(bursts.onsets.length)
    await page.locator('[data-test=strip-accept-all]').click()
    await expect.poll(() => boxes().count(), { timeout: 30_000 }).toBe(0)
    const bar = page.locator('[data-test=one-shots-to-pack]')
    await bar.waitFor()
    expect(await bar.innerText()).toContain(`${count} one-shots accepted`)
    await bar.locator('.el-select').first().click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'Relay clicks, set one' }).click()
    await bar.getByRole('button', { name: 'Add these one-shots to pack…' }).click()
    await expect
      .poll(() => page.locator('[data-test=notice]').innerText())
      .toMatch(new RegExp(`${count} one-shots added`))
    await screenshot(page, 'sweeps-one-shots-to-pack-desktop')

    const designer = await signedIn(server.url, 'designer')
    const regions = (await designer.get(`/api/takes/${burstId}/regions`)).body.regions as { id: number; kind: string }[]
    expect(regions.map((r) => r.kind)).toEqual(Array(count).fill('one-shot'))
    const pack = (await designer.get(`/api/packs/${packId}`)).body.pack as {
      items: { regionId: number | null; kind: string }[]
    }
    expect(pack.items.map((i) => i.regionId).sort()).toEqual(regions.map((r) => r.id).sort())
    expect(new Set(pack.items.map((i) => i.kind))).toEqual(new Set(['one-shot']))
  })
})
