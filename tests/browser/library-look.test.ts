// The library's own look, in Debian's Chromium, checked the way a person sees
// it: each measured row draws its spectrum glyph (pixels on the canvas, and
// words naming the hum for a screen reader); a take measured before glyphs
// existed shows a quiet placeholder until it is measured again; "Group by"
// puts rows under device headers with their counts and the row cursor walks
// them in that order; on a phone the now-playing strip is one line until
// opened. The takes are sox sines (a 50 Hz one is the mains-hum fundamental).
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
const ids: Record<string, number> = {}

const TAKES = [
  ['hum_fridge_running', ['sine', '50'], 'Fridge compressor', 'running'],
  // Other bytes than the first (an identical file would be refused as already in the library).
  ['hum_fridge_idle', ['sine', '50', 'vol', '0.8'], 'Fridge compressor', 'idle'],
  ['whine_charger', ['sine', '9200'], 'Bench charger', 'charging'],
  ['tone_unlogged', ['sine', '1000'], null, null],
] as const

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Kitchen sweep' })
  const fridge = (await rec.post('/api/sources', { name: 'Fridge compressor', kind: 'appliance' })).body.source.id
  const charger = (await rec.post('/api/sources', { name: 'Bench charger', kind: 'power-supply' })).body.source.id
  const device: Record<string, number> = { 'Fridge compressor': fridge, 'Bench charger': charger }
  for (const [name, synth, dev, state] of TAKES) {
    const f = soxWav(path.join(server.dir, `${name}.wav`), { seconds: 4, synth: [...synth] })
    const id = (await uploadTake(rec, s.id, f, `${name}.wav`)).body.take.id
    await waitForTake(rec, id, 120_000)
    if (dev) await rec.patch(`/api/takes/${id}`, { sources: [{ sourceId: device[dev], state }] }).expect(200)
    ids[name] = id
  }
  browser = await launchBrowser()
}, 240_000)
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

async function designerPage(width: number, height: number): Promise<Page> {
  // A phone-sized page is a touch screen, so taps work there.
  const context = await browser.newContext({ viewport: { width, height }, hasTouch: width < 760 })
  const page = await context.newPage()
  await signInThroughForm(page, server.url, 'designer@example.test')
  return page
}

/** Pixels of the row's glyph canvas that carry ink (alpha > 0). */
const inkedPixels = (page: Page, id: number) =>
  page.locator(`[data-take="${id}"] [data-test=take-glyph] canvas`).evaluate((c: HTMLCanvasElement) => {
    const data = c.getContext('2d')!.getImageData(0, 0, c.width, c.height).data
    let n = 0
    for (let i = 3; i < data.length; i += 4) if (data[i] > 0) n++
    return n
  })

describe('library look', () => {
  it('draws a spectrum glyph on a measured row, named in words with its hum', async () => {
    const page = await designerPage(1440, 900)
    await page.goto(`${server.url}/library`)
    const glyph = page.locator(`[data-take="${ids.hum_fridge_running}"] [data-test=take-glyph]`)
    await glyph.waitFor({ timeout: 15_000 })
    expect(await glyph.getAttribute('role')).toBe('img')
    expect(await glyph.getAttribute('aria-label')).toBe('Spectrum over time: 50 Hz hum comb, no steady whine')
    expect(await inkedPixels(page, ids.hum_fridge_running)).toBeGreaterThan(20)
    // The hum comb's ticks are drawn (eight harmonics of 50 Hz all fall inside 40 Hz – 20 kHz).
    expect(await glyph.locator('line.hum').count()).toBe(8)
    const whine = page.locator(`[data-take="${ids.whine_charger}"] [data-test=take-glyph]`)
    expect(await whine.getAttribute('aria-label')).toBe('Spectrum over time: no mains hum, whine near 9.2 kHz')
    await screenshot(page, 'library-glyphs')
    await page.context().close()
  })

  it('shows a placeholder for a take measured before glyphs, which measures it again and fills in', async () => {
    const id = ids.tone_unlogged
    // As a take stored before glyphs: the analysis without its glyph.
    const row = await server.ctx.db
      .selectFrom('takes')
      .select('analysis_json')
      .where('id', '=', id)
      .executeTakeFirstOrThrow()
    const { glyph: _dropped, ...older } = JSON.parse(row.analysis_json!) as Record<string, unknown>
    await server.ctx.db
      .updateTable('takes')
      .set({ analysis_json: JSON.stringify(older) })
      .where('id', '=', id)
      .execute()
    const page = await designerPage(1440, 900)
    await page.goto(`${server.url}/library`)
    // For a designer the placeholder is the button that measures the take again.
    const again = page.locator(`[data-take="${id}"] [data-test=take-glyph-measure]`)
    await again.waitFor({ timeout: 15_000 })
    expect(await again.getAttribute('aria-label')).toMatch(/^Measure .* again to draw its spectrum$/)
    await screenshot(page, 'library-glyph-placeholder')
    await again.click()
    // The list looks again while the take is measured, and the glyph appears without a reload.
    await page.locator(`[data-take="${id}"] [data-test=take-glyph]`).waitFor({ timeout: 120_000 })
    expect(await inkedPixels(page, id)).toBeGreaterThan(20)
    const measured = await waitForTake(await signedIn(server.url, 'designer'), id, 10_000)
    expect(measured.glyph?.columns).toBe(48)
    // A take that has its glyph is not measured again (only failed ones are).
    const res = await (await signedIn(server.url, 'designer')).post(`/api/takes/${id}/measure`)
    expect(res.status).toBe(409)
    await page.context().close()
  })

  it('groups rows by device and by device and state, with counts, and the cursor walks the groups', async () => {
    const page = await designerPage(1440, 900)
    await page.goto(`${server.url}/library?sort=filename&order=asc`)
    await page.locator('[data-test=library-table] [data-take]').first().waitFor({ timeout: 15_000 })
    await page.locator('[data-test=group-by] button', { hasText: /^.?Device$/ }).click()
    await expect.poll(() => new URL(page.url()).searchParams.get('group')).toBe('device')
    const heads = page.locator('[data-test=group-head]')
    await expect
      .poll(() => heads.allInnerTexts())
      .toEqual([
        expect.stringMatching(/Bench charger\s*1 take$/),
        expect.stringMatching(/Fridge compressor\s*2 takes$/),
        expect.stringMatching(/No source device\s*1 take$/),
      ])
    // Rows follow their headers: charger, the two fridge takes, then the unlogged one.
    const order = await page
      .locator('[data-test=library-table] [data-take]')
      .evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-take'))))
    expect(order).toEqual([ids.whine_charger, ids.hum_fridge_idle, ids.hum_fridge_running, ids.tone_unlogged])
    // The row cursor moves in the order shown: from the first row shown, down to the next.
    await page.locator(`[data-take="${ids.whine_charger}"] .c-rate`).click()
    await page.locator('h1').click()
    await page.keyboard.press('ArrowDown')
    expect(await page.locator('[aria-current=true][data-take]').getAttribute('data-take')).toBe(
      String(ids.hum_fridge_idle),
    )
    await screenshot(page, 'library-grouped-device')
    await page.locator('[data-test=group-by] button', { hasText: 'Device and state' }).click()
    await expect.poll(() => heads.count()).toBe(4)
    expect(await heads.allInnerTexts()).toContainEqual(expect.stringMatching(/Fridge compressor \(idle\)\s*1 take$/))
    await page.locator('[data-test=group-by] button', { hasText: 'None' }).click()
    await expect.poll(() => heads.count()).toBe(0)
    await page.context().close()
  })

  it('shows group headers on phone cards too', async () => {
    const page = await designerPage(390, 844)
    await page.goto(`${server.url}/library?group=device`)
    const heads = page.locator('[data-test=group-head]')
    await heads.first().waitFor({ timeout: 15_000 })
    expect(await heads.count()).toBe(3)
    const box = (await heads.first().boundingBox())!
    expect(box.width).toBeLessThanOrEqual(390)
    expect(await page.evaluate(() => document.documentElement.scrollWidth)).toBeLessThanOrEqual(390)
    await screenshot(page, 'library-grouped-phone')
    // Sorting is a new order within the same way of looking: the grouping stays.
    await page.locator('[data-test=sort-by]').selectOption('title')
    await expect.poll(() => new URL(page.url()).searchParams.get('sort')).toBe('title')
    expect(new URL(page.url()).searchParams.get('group')).toBe('device')
    expect(await heads.count()).toBe(3)
    await page.context().close()
  })

  it('opens at the top on a phone, and the row cursor scrolls the page only when the keys move it', async () => {
    const page = await designerPage(390, 844)
    await page.goto(`${server.url}/library`)
    await page.locator('[data-test=library-table] [data-take]').first().waitFor({ timeout: 15_000 })
    await page.waitForTimeout(300)
    expect(await page.evaluate(() => window.scrollY), 'the page opens at its title').toBe(0)
    await expect.poll(() => page.locator('h1').first().isVisible()).toBe(true)
    // A keyboard on a tablet or phone: ↓ walks the cards and brings the cursor's card into view.
    for (let i = 0; i < 3; i++) await page.keyboard.press('ArrowDown')
    await expect.poll(() => page.evaluate(() => window.scrollY)).toBeGreaterThan(0)
    await page.context().close()
  })

  it('folds the now-playing strip to one line on a phone and opens it', async () => {
    const page = await designerPage(390, 844)
    await page.goto(`${server.url}/library`)
    const strip = page.locator('[data-test=now-playing]')
    await strip.waitFor({ timeout: 15_000 })
    await page.locator(`[data-take="${ids.whine_charger}"] [data-test=row-play]`).tap()
    await expect.poll(() => strip.locator('[data-test=now-playing-name]').innerText()).toContain('whine_charger')
    expect((await strip.boundingBox())!.height).toBeLessThanOrEqual(72)
    expect(await strip.locator('[data-test=now-playing-master]').isVisible()).toBe(false)
    expect(await strip.locator('[data-test=now-playing-toggle]').isVisible()).toBe(true)
    await screenshot(page, 'now-playing-folded-phone')
    const fold = strip.locator('[data-test=now-playing-fold]')
    expect(await fold.getAttribute('aria-expanded')).toBe('false')
    await fold.tap()
    expect(await fold.getAttribute('aria-expanded')).toBe('true')
    expect(await strip.locator('[data-test=now-playing-master]').isVisible()).toBe(true)
    expect(await strip.locator('[data-test=now-playing-caution]').isVisible()).toBe(true)
    expect((await strip.boundingBox())!.height).toBeGreaterThan(72)
    await screenshot(page, 'now-playing-open-phone')
    await page.context().close()
  })

  it('keeps the whole strip on a desktop, with no fold button', async () => {
    const page = await designerPage(1440, 900)
    await page.goto(`${server.url}/library`)
    const strip = page.locator('[data-test=now-playing]')
    await strip.waitFor({ timeout: 15_000 })
    expect(await strip.locator('[data-test=now-playing-fold]').isVisible()).toBe(false)
    expect(await strip.locator('[data-test=now-playing-master]').isVisible()).toBe(true)
    expect(await strip.locator('[data-test=now-playing-caution]').isVisible()).toBe(true)
    await page.context().close()
  })

  it('shows a long device name and state whole, and a tag of two words on one line, on a laptop', async () => {
    const admin = await signedIn(server.url, 'admin')
    const radio = (
      await admin.post('/api/sources', { name: 'Handheld two-way radio, long antenna', kind: 'radio-link' }).expect(201)
    ).body.source.id
    const id = ids.tone_unlogged
    await admin
      .patch(`/api/takes/${id}`, {
        title: 'Radio bursts at the bench with the long antenna, second pass',
        sources: [{ sourceId: radio, state: 'transmitting' }],
        tags: ['data burst', 'loud'],
      })
      .expect(200)
    const page = await designerPage(1366, 768)
    await page.goto(`${server.url}/library`)
    const row = page.locator(`[data-take="${id}"]`)
    await row.waitFor({ timeout: 15_000 })
    const word = row.locator('.sf-kind-chip .word')
    expect(await word.innerText()).toBe('Handheld two-way radio, long antenna (transmitting)')
    // Whole: nothing of the words is cut off inside the chip.
    expect(await word.evaluate((el) => el.scrollWidth <= el.clientWidth + 1)).toBe(true)
    const tag = row.locator('.tag', { hasText: 'data burst' })
    expect(await tag.evaluate((el) => el.getClientRects().length)).toBe(1)
    const [h, line] = await tag.evaluate((el) => [
      el.getBoundingClientRect().height,
      parseFloat(getComputedStyle(el).fontSize),
    ])
    expect(h, 'one line of the tag').toBeLessThan(line * 2)
    await screenshot(page, 'library-long-names-laptop')
    // The table still fits the page: its last column is on screen.
    const state = row.locator('td').last()
    const box = (await state.boundingBox())!
    expect(box.x + box.width).toBeLessThanOrEqual(1366)
    await page.context().close()
  })
})
