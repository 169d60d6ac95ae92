// A designer adds a control curve to a pack item in the pack editor with the mouse
// (envelope, then MIDI), sees the row say so with the DC-coupling caution, and the
// item's settings hold the curve. Desktop 1440 × 900 and phone 390 × 844.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser } from 'playwright-core'
import { MODULATION_CAUTION } from '@shared/schemas/modulation'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
let designer: Client
let packId = 0

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Curve sources' })
  const f = soxWav(path.join(server.dir, 'hum.wav'), { seconds: 2, channels: 1, synth: ['sine', '100'] })
  const takeId = (await uploadTake(rec, s.id, f, 'hum.wav')).body.take.id
  await waitForTake(rec, takeId)
  designer = await signedIn(server.url, 'designer')
  packId = (await designer.post('/api/packs', { name: 'Curves' })).body.pack.id
  await designer.post(`/api/packs/${packId}/items/batch`, { items: [{ takeId, name: 'bench hum' }] })
  browser = await launchBrowser()
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

const itemModulation = async () => (await designer.get(`/api/packs/${packId}`)).body.pack.items[0].settings?.modulation

describe('control curve in the pack editor', () => {
  for (const [label, viewport] of [
    ['desktop', { width: 1440, height: 900 }],
    ['phone', { width: 390, height: 844 }],
  ] as const) {
    it(`${label}: envelope as wav, then MIDI, then none`, async () => {
      const page = await browser.newPage({ viewport })
      await signInThroughForm(page, server.url, 'designer@example.test')
      await page.goto(`${server.url}/packs/${packId}`)
      const curve = page.locator('[data-test=item-curve]').first()
      await curve.locator('[data-test=item-curve-toggle]').click()
      await expect.poll(() => curve.locator('[data-test=item-curve-caution]').innerText()).toBe(MODULATION_CAUTION)
      await curve.locator('[data-test=item-curve-source]').click()
      await page.locator('.el-select-dropdown__item:visible', { hasText: 'Envelope' }).click()
      await expect.poll(() => curve.locator('[data-test=item-curve-note]').innerText()).toBe('+ envelope curve (wav)')
      expect(await itemModulation()).toMatchObject({ source: 'envelope', format: 'wav', rateHz: 1000 })

      await curve.locator('[data-test=item-curve-format]').click()
      await page.locator('.el-select-dropdown__item:visible', { hasText: 'MIDI controller' }).click()
      await expect.poll(() => curve.locator('[data-test=item-curve-note]').innerText()).toBe('+ envelope curve (MIDI)')
      expect(await itemModulation()).toMatchObject({ format: 'midi', range: { low: 0, high: 127 } })
      await screenshot(page, `packs-modulation-${label}`)

      await curve.locator('[data-test=item-curve-source]').click()
      await page.locator('.el-select-dropdown__item:visible', { hasText: 'No curve' }).click()
      await expect.poll(() => curve.locator('[data-test=item-curve-note]').count()).toBe(0)
      expect(await itemModulation()).toBeUndefined()
      await page.close()
    })
  }
})
