// The capture board and logging sheet in Debian's Chromium, at a phone
// (390 × 844) and a desktop (1440 × 900) size:
// - a card names its session's default device in a kind chip, and carries the
//   kind's colour on its left edge while its words keep the text colour
//   (colour as a second cue only: WCAG 2.1, 1.4.1 Use of colour);
// - with the now-playing strip shown, the page keeps at least the strip's
//   height free below its content, and a row scrolled into view stops above
//   the strip rather than behind it.
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'
import { signedIn } from '../helpers/server'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

const env = useBrowserServer()
const SIZES = [
  { name: 'phone', width: 390, height: 844 },
  { name: 'desktop', width: 1440, height: 900 },
] as const

async function setUp() {
  const rec = await signedIn(env.server.url, 'recordist')
  const charger = (await rec.post('/api/sources', { name: 'Bench charger', kind: 'power-supply' })).body.source.id
  const session = await createSession(rec, {
    title: 'Charger bench',
    defaultSourceId: charger,
    defaultState: 'charging',
  })
  for (let i = 1; i <= 6; i++) {
    const f = soxWav(path.join(env.server.dir, `whine_${i}.wav`), { seconds: 1, synth: ['sine', String(1000 * i)] })
    await waitForTake(rec, (await uploadTake(rec, session.id, f, `whine_${i}.wav`)).body.take.id)
  }
  return session.id
}

const colour = (page: Page, selector: string, prop: string) =>
  page
    .locator(selector)
    .first()
    .evaluate((el, p) => getComputedStyle(el).getPropertyValue(p), prop)

describe('capture board and logging sheet look', () => {
  it('colours each card by its device kind and keeps room for the now-playing strip', async () => {
    const sessionId = await setUp()
    for (const size of SIZES) {
      const page = await env.browser.newPage({ viewport: { width: size.width, height: size.height } })
      await signInThroughForm(page, env.server.url, 'recordist@example.test')
      await page.goto(`${env.server.url}/captures`)
      const chip = page.locator('[data-test=board-device] .sf-kind-chip')
      await expect.poll(() => chip.innerText()).toBe('Bench charger (charging)')
      expect(await chip.getAttribute('data-kind-family')).toBe('switching')

      // The card's left edge wears the switching-supply colour; its title stays in the text colour.
      const kind = await page.evaluate(() => {
        const probe = document.createElement('span')
        probe.style.color = 'var(--sf-kind-switching)'
        document.body.append(probe)
        const c = getComputedStyle(probe).color
        probe.remove()
        return c
      })
      const card = '[data-test=capture-board] a'
      // Polled: the edge eases into its colour once the catalogue has loaded.
      await expect.poll(() => colour(page, card, 'border-left-color'), { message: size.name }).toBe(kind)
      expect(await colour(page, `${card} h2`, 'color'), size.name).not.toBe(kind)
      await screenshot(page, `capture-board/board-${size.name}`)

      await page.goto(`${env.server.url}/captures/${sessionId}`)
      const strip = page.locator('[data-test=now-playing]')
      await strip.waitFor()
      const rows = page.locator('[data-test=log-sheet] tr.row')
      await expect.poll(() => rows.count()).toBe(6)
      const stripHeight = (await strip.boundingBox())!.height
      const held = await page.evaluate(() => ({
        variable: parseFloat(getComputedStyle(document.documentElement).getPropertyValue('--sf-now-playing-h')),
        padding: parseFloat(getComputedStyle(document.querySelector('.sf-page')!).paddingBottom),
      }))
      expect(held.variable, size.name).toBeCloseTo(stripHeight, 0)
      expect(held.padding, size.name).toBeGreaterThanOrEqual(stripHeight)

      // A row brought into view (as the row cursor does) lands above the strip, not behind it.
      await page.evaluate(() => window.scrollTo(0, 0))
      const play = rows.nth(3).locator('button').first()
      await play.evaluate((el) => el.scrollIntoView({ block: 'nearest' }))
      const [button, bar] = [(await play.boundingBox())!, (await strip.boundingBox())!]
      expect(button.y + button.height, size.name).toBeLessThanOrEqual(bar.y + 1)
      await screenshot(page, `capture-board/sheet-${size.name}`)
      await page.close()
    }
  })
})
