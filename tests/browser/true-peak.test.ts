// One take, one true peak on screen: the take page's headline, the library row and the API
// agree for a 50 Hz sine that starts at its crest (where a meter assuming silence before the
// take reads an overshoot), and that other figure is named apart with its explanation.
// The reference is Debian's ffmpeg (ebur128 filter, peak=true; ITU-R BS.1770-4 Annex 2).
import path from 'node:path'
import { beforeAll, describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { SCREENSHOTS, screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'
import { signedIn } from '../helpers/server'
import { createSession, uploadTake, waitForTake } from '../helpers/uploads'
import { ffmpegEbur128, sox } from '../helpers/reference-tools'
import { db } from '../../src/composables/format'

const env = useBrowserServer()
let takeId: number
let file: string
let truePeak: number

beforeAll(async () => {
  const rec = await signedIn(env.server.url, 'recordist')
  const session = await createSession(rec, { title: 'Abrupt hum on screen' })
  // sox synth: a 50 Hz sine with a phase of 25 % of a cycle (the first sample is the crest) at −12 dBFS.
  file = path.join(env.server.dir, 'abrupt-hum.wav')
  const synth = ['synth', '4', 'sine', '50', '0', '25', 'vol', '0.2512']
  sox(['-r', '48000', '-n', '-r', '48000', '-b', '24', '-c', '1', file, ...synth])
  takeId = (await uploadTake(rec, session.id, file, 'abrupt_hum.wav')).body.take.id
  truePeak = (await waitForTake(rec, takeId)).analysis.levels.truePeakDbtp
})

async function at(width: number, height: number): Promise<Page> {
  const page = await (await env.browser.newContext({ viewport: { width, height }, hasTouch: width < 600 })).newPage()
  await signInThroughForm(page, env.server.url, 'designer@example.test')
  return page
}

describe('true peak of one take', () => {
  for (const [name, w, h] of [
    ['desktop', 1440, 900],
    ['phone', 390, 844],
  ] as const) {
    it(`reads the same on the take page and in the library (${name})`, async () => {
      expect(Math.abs(truePeak - ffmpegEbur128(file).truePeakDbtp)).toBeLessThanOrEqual(0.1)
      const shown = db(truePeak, 'dBTP') // "−12.0 dBTP"
      const page = await at(w, h)

      await page.goto(`${env.server.url}/takes/${takeId}`)
      const headline = page.locator('[data-test=measurement-card] [data-test=true-peak]')
      await expect.poll(() => headline.innerText(), { timeout: 20_000 }).toBe(shown)
      // The figure played from silence is higher here, and said to be another quantity.
      const other = page.locator('[data-test=peak-from-silence]')
      expect(await other.innerText()).toMatch(/^Played from silence: −\d+\.\d dBTP$/)
      expect(await other.innerText()).not.toContain(shown)
      // The explanation: under the mouse on a desk, under a finger (focus) on a phone.
      if (name === 'desktop') await other.hover()
      else await other.tap()
      await expect
        .poll(() => page.locator('.el-popper', { hasText: 'starting from silence' }).isVisible(), { timeout: 5_000 })
        .toBe(true)
      await screenshot(page, `true-peak-take-${name}`)
      await page.screenshot({ path: path.join(SCREENSHOTS, `true-peak-card-${name}.png`) })

      await page.goto(`${env.server.url}/library?q=abrupt`)
      const cell = page.locator(`[data-test=library-table] [data-take="${takeId}"] .c-tp`)
      await expect.poll(() => cell.innerText(), { timeout: 20_000 }).toBe(shown)
      await screenshot(page, `true-peak-library-${name}`)
      await page.context().close()
    })
  }
})
