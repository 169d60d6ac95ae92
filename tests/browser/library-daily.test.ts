// The sound designer's daily loop in the library, in Debian's Chromium, done
// the way a person does it: typing words into the search, typing a loudness range, auditioning with N/N/P
// while the now-playing strip moves, walking rows with Up/Down/Enter, tagging
// three tags with Enter, renaming a tag in the tag manager, and a recordist's
// bulk bar that says when the selection holds takes of others.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, BrowserContext, Page } from 'playwright-core'
import { evenLevelGainDb } from '../../src/stores/audition'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

interface Measured {
  id: number
  title: string
  lufs: number
  tp: number
}

let server: TestServer
let browser: Browser
let context: BrowserContext
let page: Page
let designer: Client
const takes: Measured[] = []
let adminTake: Measured

// 1 kHz sines at falling amplitudes (sox, then its own `vol 0.5`): about −8, −17, −28 and −42 LUFS.
const LEVELS = [
  ['loud_charger', '1'],
  ['mid_monitor', '0.35'],
  ['soft_fan', '0.1'],
  ['faint_radio', '0.02'],
] as const

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  const admin = await signedIn(server.url, 'admin')
  designer = await signedIn(server.url, 'designer')
  const dir = path.join(server.dir, 'files')
  const s = await createSession(rec, { title: 'Desk sweep' })
  const ids: number[] = []
  for (const [name, vol] of LEVELS) {
    const f = soxWav(path.join(dir, `${name}.wav`), { seconds: 6, synth: ['sine', '1000', 'vol', vol] })
    ids.push((await uploadTake(rec, s.id, f, `${name}.wav`)).body.take.id)
  }
  const a = await createSession(admin, { title: 'Admin bench' })
  const af = soxWav(path.join(dir, 'admin_hum.wav'), { seconds: 6, synth: ['sine', '50', 'vol', '0.3'] })
  const adminId = (await uploadTake(admin, a.id, af, 'admin_hum.wav')).body.take.id
  const toMeasured = (t: {
    id: number
    title: string
    analysis: { loudness: { integratedLufs: number }; levels: { truePeakDbtp: number } }
  }) => ({
    id: t.id,
    title: t.title,
    lufs: t.analysis.loudness.integratedLufs,
    tp: t.analysis.levels.truePeakDbtp,
  })
  for (const id of ids) takes.push(toMeasured(await waitForTake(rec, id, 120_000)))
  adminTake = toMeasured(await waitForTake(admin, adminId, 120_000))
  // One tag already in use, so the chips can tell "new" from known.
  await designer.patch(`/api/takes/${adminTake.id}`, { tags: ['hum'] }).expect(200)
  browser = await launchBrowser()
  context = await browser.newContext({ viewport: { width: 1440, height: 900 } })
  page = await context.newPage()
  await signInThroughForm(page, server.url, 'designer@example.test')
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

const shownIds = () =>
  page
    .locator('[data-test=library-table] [data-take]')
    .evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-take'))).sort((a, b) => a - b))
const rowOrder = () =>
  page
    .locator('[data-test=library-table] [data-take]')
    .evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-take'))))
const strip = () => page.locator('[data-test=now-playing]')
const elapsed = () => strip().locator('[data-test=now-playing-elapsed]').innerText()
// formatTakeTime's "m:ss.s" back to seconds.
const toSeconds = (t: string) => {
  const [m, s] = t.split(':')
  return Number(m) * 60 + Number(s)
}

/** The library with every take of the test listed. */
async function openWholeLibrary() {
  await page.goto(`${server.url}/library`)
  await expect.poll(shownIds, { timeout: 10_000 }).toHaveLength(5)
}

describe('searching by words', () => {
  it('types the start of a word and sees the takes it begins, says why nothing matched, and clears back to all', async () => {
    await openWholeLibrary()
    const box = page.locator('input[data-test=library-search]')
    await box.click()
    // "moni" begins "monitor" in the title "mid_monitor" (the index splits at the underscore).
    await page.keyboard.type('moni')
    const monitor = takes.find((t) => t.title === 'mid_monitor')!
    await expect.poll(shownIds, { timeout: 10_000 }).toEqual([monitor.id])
    expect(new URL(page.url()).searchParams.get('q')).toBe('moni')
    expect(await page.locator('[data-test=library-total]').innerText()).toBe('1 take')
    // Two words that no one take holds: nothing, and the words say to check the spelling.
    await page.keyboard.type(' fan')
    await page.keyboard.press('Enter')
    await expect.poll(shownIds, { timeout: 10_000 }).toEqual([])
    expect(await page.locator('[data-test=library-empty]').innerText()).toBe(
      'No take has words beginning with “moni fan”. Check the spelling, or search for fewer words.',
    )
    await screenshot(page, 'library-words-none')
    // Select the words and delete them: every take again, and no q in the URL.
    await page.keyboard.press('Control+A')
    await page.keyboard.press('Backspace')
    await expect.poll(shownIds, { timeout: 10_000 }).toHaveLength(5)
    expect(new URL(page.url()).searchParams.has('q')).toBe(false)
  })
})

describe('range filters', () => {
  it('takes −20 and −10 typed into the loudness range (with Enter) and shows only the takes between them', async () => {
    await openWholeLibrary()
    const min = page.locator('[data-test=filter-min-lufs]')
    await min.click()
    await page.keyboard.type('-20')
    await page.keyboard.press('Tab')
    await page.keyboard.type('-10')
    await page.keyboard.press('Enter')
    // What was typed stays in the boxes (it used to be thrown away).
    expect(await min.inputValue()).toBe('-20')
    expect(await page.locator('[data-test=filter-max-lufs]').inputValue()).toBe('-10')
    const expected = takes.filter((t) => t.lufs >= -20 && t.lufs <= -10).map((t) => t.id)
    expect(expected.length).toBeGreaterThan(0)
    expect(expected.length).toBeLessThan(takes.length)
    await expect.poll(shownIds, { timeout: 10_000 }).toEqual(expected.sort((a, b) => a - b))
    // Only the −17 LUFS take lies between them; the count says so in the singular.
    expect(expected).toHaveLength(1)
    expect(await page.locator('[data-test=library-total]').innerText()).toBe('1 take')
    const url = new URL(page.url())
    expect(url.searchParams.get('minLufs')).toBe('-20')
    expect(url.searchParams.get('maxLufs')).toBe('-10')
    await screenshot(page, 'library-loudness-range')
  })

  it('applies a decimal after a short pause without Enter, keeps the range in the URL across a reload', async () => {
    await page.locator('[data-test=filter-min-duration]').click()
    await page.keyboard.type('5.5')
    await expect.poll(() => new URL(page.url()).searchParams.get('minDuration'), { timeout: 5000 }).toBe('5.5')
    await page.locator('[data-test=filter-max-duration]').click()
    await page.keyboard.type('5.9')
    await page.keyboard.press('Enter')
    // Every take is 6 s long: nothing lasts at most 5.9 s.
    await expect.poll(shownIds, { timeout: 10_000 }).toEqual([])
    await page.reload()
    await expect
      .poll(() => page.locator('[data-test=filter-max-duration]').inputValue(), { timeout: 10_000 })
      .toBe('5.9')
    expect(await page.locator('[data-test=filter-min-lufs]').inputValue()).toBe('-20')
    await page.locator('[data-test=filter-max-duration]').click()
    await page.keyboard.press('Control+a')
    await page.keyboard.press('Backspace')
    await page.keyboard.press('Enter')
    await expect.poll(() => new URL(page.url()).searchParams.get('maxDuration'), { timeout: 10_000 }).toBeNull()
    await expect.poll(shownIds, { timeout: 10_000 }).not.toEqual([])
  })

  it('flags text that is not a number and leaves the query alone', async () => {
    await page.locator('[data-test=filter-min-true-peak]').click()
    await page.keyboard.type('loud')
    await page.keyboard.press('Enter')
    await expect
      .poll(() => page.locator('[data-test=filter-min-true-peak]').getAttribute('aria-invalid'), { timeout: 10_000 })
      .toBe('true')
    expect(new URL(page.url()).searchParams.get('minTruePeak')).toBeNull()
    await page.keyboard.press('Control+a')
    await page.keyboard.type('-30')
    await page.keyboard.press('Enter')
    await expect.poll(() => new URL(page.url()).searchParams.get('minTruePeak'), { timeout: 10_000 }).toBe('-30')
  })

  it('exports the current query as CSV: the same takes as the list', async () => {
    const href = await page.locator('[data-test=library-export]').getAttribute('href')
    expect(href).toContain('minLufs=-20')
    const res = await page.request.get(`${server.url}${href}`)
    expect(res.status()).toBe(200)
    const lines = (await res.text())
      .replace(/^\uFEFF/, '')
      .trimEnd()
      .split('\r\n')
    expect(
      lines
        .slice(1)
        .map((l) => Number(l.split(',')[0]))
        .sort((a, b) => a - b),
    ).toEqual(await shownIds())
  })
})

describe('auditioning with the keyboard', () => {
  it('N, N, P play the next, next and previous take; the strip names each, its time moves, and it shows the even-level gain and the caution', async () => {
    await page.goto(`${server.url}/library?sort=title&order=asc`)
    await expect.poll(shownIds, { timeout: 10_000 }).toHaveLength(5)
    const order = await rowOrder()
    const byId = new Map([...takes, adminTake].map((t) => [t.id, t]))
    await expect(strip().locator('[data-test=now-playing-caution]').innerText()).resolves.toBe(
      '⚠ Start quiet: pickups can burst loud.',
    )
    // The master volume starts low.
    expect(Number(await strip().locator('[data-test=now-playing-master]').inputValue())).toBeLessThanOrEqual(0.5)

    await page.locator('body').click({ position: { x: 5, y: 5 } })
    await page.keyboard.press('n')
    await page.keyboard.press('n')
    await page.keyboard.press('p')
    const first = byId.get(order[0])!
    await expect
      .poll(() => strip().locator('[data-test=now-playing-name]').innerText(), { timeout: 10_000 })
      .toBe(first.title)
    await expect.poll(async () => toSeconds(await elapsed()), { timeout: 20_000 }).toBeGreaterThan(0.5)
    const t1 = toSeconds(await elapsed())
    await expect.poll(async () => toSeconds(await elapsed()), { timeout: 10_000 }).toBeGreaterThan(t1)
    expect(await strip().locator('[data-test=now-playing-total]').innerText()).toBe('0:06.0')
    // The gain the strip names is the one the store applies: target minus loudness, held under the −1 dBTP ceiling.
    const g = evenLevelGainDb(first.lufs, first.tp)
    const sign = g >= 0 ? '+' : '\u2212'
    expect(await strip().locator('[data-test=now-playing-gain]').innerText()).toBe(
      `even level: ${sign}${Math.abs(g).toFixed(1)} dB → \u221223 LUFS`,
    )
    // The row says it is playing in words too.
    await expect
      .poll(() => page.locator(`[data-take="${first.id}"]`).innerText(), { timeout: 10_000 })
      .toContain('playing')

    await page.keyboard.press('n')
    await expect
      .poll(() => strip().locator('[data-test=now-playing-name]').innerText(), { timeout: 10_000 })
      .toBe(byId.get(order[1])!.title)
    await screenshot(page, 'library-now-playing')
    // The scrubber moves the position from the keyboard too (a range input: arrows step it).
    const scrub = strip().getByRole('slider', { name: 'Position' })
    await scrub.focus()
    await page.keyboard.press('Home')
    // Chromium steps a range input by a tenth of its span on PageUp: four of them reach 2.4 s of the 6 s take.
    for (let i = 0; i < 4; i++) await page.keyboard.press('PageUp')
    await expect.poll(async () => toSeconds(await elapsed()), { timeout: 10_000 }).toBeGreaterThanOrEqual(2.3)
    expect(toSeconds(await elapsed())).toBeLessThan(5)
    await page.locator('body').click({ position: { x: 5, y: 5 } })
    // Space pauses: the time stops.
    await page.keyboard.press(' ')
    await expect
      .poll(() => strip().locator('[data-test=now-playing-toggle]').getAttribute('aria-label'), { timeout: 10_000 })
      .toBe('Play (Space)')
    const paused = await elapsed()
    await page.waitForTimeout(600)
    expect(await elapsed()).toBe(paused)
  })

  it('Up and Down move the row cursor, Enter opens the listening bench of that row', async () => {
    const order = await rowOrder()
    await page.keyboard.press('ArrowDown')
    await page.keyboard.press('ArrowDown')
    await page.keyboard.press('ArrowUp')
    // N/P left the cursor on the second row; down, down, up ends on the third.
    await expect
      .poll(() => page.locator('[data-take][aria-current=true]').getAttribute('data-take'), { timeout: 10_000 })
      .toBe(String(order[2]))
    await page.keyboard.press('Enter')
    await page.waitForURL(`**/takes/${order[2]}`)
  })
})

describe('Enter on a focused control', () => {
  it('presses that control (here a column heading sorts) instead of opening the bench', async () => {
    await openWholeLibrary()
    await page.getByRole('button', { name: 'Integrated' }).focus()
    await page.keyboard.press('Enter')
    await expect.poll(() => new URL(page.url()).searchParams.get('sort'), { timeout: 10_000 }).toBe('integratedLufs')
    expect(new URL(page.url()).pathname).toBe('/library')
    const lufs = takes
      .concat(adminTake)
      .sort((a, b) => a.lufs - b.lufs)
      .map((t) => t.id)
    await expect.poll(rowOrder, { timeout: 10_000 }).toEqual(lufs)
  })
})

describe('tags', () => {
  it('three tags typed with Enter become three chips, new ones say so, and Apply puts all three on the selected takes', async () => {
    await page.goto(`${server.url}/library?sort=title&order=asc`)
    await expect.poll(shownIds, { timeout: 10_000 }).toHaveLength(5)
    const [a, b] = takes
    await page.getByRole('checkbox', { name: `Select ${a.title}` }).check()
    await page.getByRole('checkbox', { name: `Select ${b.title}` }).check()
    const box = page.locator('[data-test=bulk-bar] [data-test=tag-input]')
    await box.click()
    for (const tag of ['hum', 'Mains', 'bright whine']) {
      await page.keyboard.type(tag)
      await page.keyboard.press('Enter')
    }
    expect(await box.inputValue()).toBe('')
    const chips = page.locator('[data-test=bulk-bar] [data-test=tag-chip]')
    await expect
      .poll(() => chips.locator('.t').allInnerTexts(), { timeout: 10_000 })
      .toEqual(['hum', 'mains', 'bright whine'])
    // "hum" is on a take already; the other two are new.
    await expect
      .poll(() => page.locator('[data-test=bulk-bar] [data-test=tag-new]').count(), { timeout: 10_000 })
      .toBe(2)
    expect(await chips.filter({ hasText: 'hum' }).locator('[data-test=tag-new]').count()).toBe(0)
    await screenshot(page, 'library-tag-chips')
    // Enter in the empty box applies.
    await page.keyboard.press('Enter')
    await expect.poll(() => page.locator('[data-test=bulk-bar]').count(), { timeout: 10_000 }).toBe(0)
    for (const t of [a, b]) {
      const res = await designer.get(`/api/takes/${t.id}`).expect(200)
      expect(res.body.take.tags).toEqual(['bright whine', 'hum', 'mains'])
      await expect
        .poll(() => page.locator(`[data-take="${t.id}"] .c-tags .tag`).allInnerTexts(), { timeout: 10_000 })
        .toEqual(['bright whine', 'hum', 'mains'])
    }
  })

  it("the tag manager renames a tag on every take, shows the new counts, and each take's history says so", async () => {
    await page.goto(`${server.url}/library`)
    await page.locator('[data-test=tag-manager-link]').click()
    await page.waitForURL('**/library/tags')
    const row = page.locator('[data-tag="mains"]')
    await expect.poll(() => row.locator('td.num').innerText(), { timeout: 10_000 }).toBe('2')
    await page.getByRole('button', { name: 'Rename mains' }).click()
    await page.keyboard.press('Control+a')
    await page.keyboard.type('mains hum')
    await page.keyboard.press('Enter')
    await expect
      .poll(() => page.locator('[data-test=tag-done]').innerText(), { timeout: 10_000 })
      .toBe('“mains” is now “mains hum” on 2 takes.')
    await expect.poll(() => page.locator('[data-tag="mains hum"] td.num').innerText(), { timeout: 10_000 }).toBe('2')
    expect(await page.locator('[data-tag="mains"]').count()).toBe(0)
    const history = (await designer.get(`/api/takes/${takes[0].id}/history`).expect(200)).body.events
    expect(history[0].summary).toBe('Tag “mains” renamed to “mains hum” (tag manager)')
    await screenshot(page, 'tag-manager')
  })

  it('the tag manager merges two tags into one typed name', async () => {
    await page.getByRole('checkbox', { name: 'Pick bright whine to merge' }).check()
    await page.getByRole('checkbox', { name: 'Pick mains hum to merge' }).check()
    const into = page.locator('[data-test=tag-merge-into]')
    await into.click()
    await page.keyboard.press('Control+a')
    await page.keyboard.type('whine')
    await page.keyboard.press('Enter')
    await expect
      .poll(() => page.locator('[data-test=tag-done]').innerText(), { timeout: 10_000 })
      .toBe('“bright whine”, “mains hum” merged into “whine” on 2 takes.')
    await expect.poll(() => page.locator('[data-tag="whine"] td.num').innerText(), { timeout: 10_000 }).toBe('2')
    expect(await page.locator('[data-tag="bright whine"], [data-tag="mains hum"]').count()).toBe(0)
    const res = await designer.get(`/api/takes/${takes[1].id}`).expect(200)
    expect(res.body.take.tags).toEqual(['hum', 'whine'])
  })
})

describe('a recordist in the library', () => {
  it('gets the bulk bar for their own takes, and it says when the selection holds takes of others', async () => {
    const ctx = await browser.newContext({ viewport: { width: 1440, height: 900 } })
    const p = await ctx.newPage()
    await signInThroughForm(p, server.url, 'recordist@example.test')
    await p.goto(`${server.url}/library?sort=title&order=asc`)
    await expect.poll(() => p.locator('[data-test=library-table] [data-take]').count(), { timeout: 10_000 }).toBe(5)
    await p.getByRole('checkbox', { name: `Select ${takes[0].title}` }).check()
    await expect.poll(() => p.locator('[data-test=bulk-bar]').count(), { timeout: 10_000 }).toBe(1)
    expect(await p.locator('[data-test=bulk-limit]').count()).toBe(0)
    await p.getByRole('checkbox', { name: `Select ${adminTake.title}` }).check()
    await expect
      .poll(() => p.locator('[data-test=bulk-limit]').innerText())
      .toBe('Changes apply to your 1 take only: 1 of the selection was uploaded by Ada Quillfeather.')
    expect(await p.locator('[data-test=bulk-apply]').innerText()).toBe('Apply to 1')
    await screenshot(p, 'library-recordist-bulk')
    await ctx.close()
  })
})

describe('on a phone', () => {
  it('shows takes as cards that fit 390 px, with the filters and the strip usable', async () => {
    const ctx = await browser.newContext({ viewport: { width: 390, height: 844 }, isMobile: true, hasTouch: true })
    const p = await ctx.newPage()
    await signInThroughForm(p, server.url, 'designer@example.test')
    await p.goto(`${server.url}/library`)
    await expect.poll(() => p.locator('[data-test=library-table] [data-take]').count(), { timeout: 10_000 }).toBe(5)
    const card = p.locator('[data-test=library-table] [data-take]').first()
    const box = (await card.boundingBox())!
    expect(box.width).toBeLessThanOrEqual(390)
    expect(box.height).toBeGreaterThan(120) // a card, not a 48 px table row
    // Each number carries its name on the card (a CSS label, since the table head is hidden).
    const label = await card.locator('td.c-lufs').evaluate((td) => getComputedStyle(td, '::before').content)
    expect(label).toBe('"Integrated"')
    // Nothing of the library page reaches past the screen's edge (the top navigation is the look's own).
    const overflowing = await p.evaluate(() =>
      [...document.querySelectorAll('.library *')]
        .filter((e) => e.getBoundingClientRect().right > 391)
        .map((e) => e.className),
    )
    expect(overflowing).toEqual([])
    // The filters fold away under one button on a phone.
    expect(await p.locator('[data-test=filter-min-lufs]').isVisible()).toBe(false)
    await p.getByRole('button', { name: 'Filters' }).tap()
    await p.locator('[data-test=filter-min-lufs]').tap()
    await p.keyboard.type('-20')
    await p.keyboard.press('Enter')
    await expect.poll(() => new URL(p.url()).searchParams.get('minLufs'), { timeout: 10_000 }).toBe('-20')
    await expect
      .poll(() => p.locator('[data-test=library-table] [data-take]').count(), { timeout: 10_000 })
      .toBe(takes.filter((t) => t.lufs >= -20).length + (adminTake.lufs >= -20 ? 1 : 0))
    await screenshot(p, 'library-phone')
    await ctx.close()
  })
})
