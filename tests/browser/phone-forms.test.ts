// Forms, sorting and pickers on a phone (390 × 844) and a desktop (1440 × 900),
// in Debian's Chromium, used by typing, pressing keys and dragging: a capture
// session is created and edited with Save inside the screen; the library's
// cards are sorted by the phone's own control, which writes the same URL as
// the table's headers; a region is named by typing over the suggested name;
// pickers show one focus ring and Strayfield's own list, tags and words; the
// bench's notices sit in the flow under their row, covering no button.
// The takes are sox sines of 2, 5 and 3 seconds (lengths read by the server's
// own measurement, so the sort order is known from the files).
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Locator, Page } from 'playwright-core'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
let sessionId: number
const ids: Record<string, number> = {}
const PHONE = { width: 390, height: 844 }
const DESKTOP = { width: 1440, height: 900 }

const TAKES = [
  ['charger_whine', 2, '9200'],
  ['fridge_hum', 5, '50'],
  ['router_buzz', 3, '1000'],
] as const

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  sessionId = (await createSession(rec, { title: 'Hallway sweep' })).id
  for (const [name, seconds, hz] of TAKES) {
    const f = soxWav(path.join(server.dir, `${name}.wav`), { seconds, synth: ['sine', hz] })
    const id = (await uploadTake(rec, sessionId, f, `${name}.wav`)).body.take.id
    await waitForTake(rec, id, 120_000)
    ids[name] = id
  }
  await rec.post('/api/sources', { name: 'Hallway light dimmer', kind: 'appliance' }).expect(201)
  await rec.post('/api/sources', { name: 'Doorbell transformer', kind: 'power-supply' }).expect(201)
  const designer = await signedIn(server.url, 'designer')
  await designer.post('/api/packs', { name: 'Hallway beds' }).expect(201)
  browser = await launchBrowser()
}, 240_000)
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

async function pageAs(email: string, size: { width: number; height: number }): Promise<Page> {
  const context = await browser.newContext({ viewport: size })
  const page = await context.newPage()
  // A step that cannot happen fails by name well inside the test's own time limit.
  page.setDefaultTimeout(15_000)
  await signInThroughForm(page, server.url, email)
  return page
}

/** Whether an element lies wholly inside the viewport's width (and, when asked, its height). */
async function inside(page: Page, loc: Locator, vertical = false) {
  const b = await loc.boundingBox()
  const vp = page.viewportSize()!
  if (!b) return false
  const across = b.x >= 0 && b.x + b.width <= vp.width + 0.5
  return vertical ? across && b.y >= 0 && b.y + b.height <= vp.height + 0.5 : across
}

/** Waits until an opened list or calendar has finished growing into place (no running transition), for its screenshot. */
const settled = (loc: Locator) =>
  expect.poll(() => loc.evaluate((e) => (e.closest('.el-popper') ?? e).getAnimations({ subtree: true }).length)).toBe(0)

describe('capture session forms on a phone', () => {
  it('New capture session: every field and Save inside the screen; typed and saved', async () => {
    const page = await pageAs('recordist@example.test', PHONE)
    await page.goto(`${server.url}/captures`)
    await page.locator('[data-test=new-session]').click()
    const dialog = page.locator('.el-dialog', { hasText: 'New capture session' })
    await dialog.waitFor()
    await expect.poll(() => inside(page, dialog)).toBe(true)
    for (const sel of ['input[name=title]', 'input[name=date]', 'input[name=recorder]', 'input[name=gain]'])
      expect(await inside(page, dialog.locator(sel)), sel).toBe(true)
    expect(await inside(page, dialog.locator('.el-dialog__headerbtn'), true)).toBe(true)

    await page.locator('input[name=title]').click()
    await page.keyboard.type('Stairwell lights')
    await page.locator('input[name=recorder]').click()
    await page.keyboard.type('Pocket recorder')
    await screenshot(page, 'phone-forms-new-session')

    // The date field opens our calendar, which fits the phone's width too.
    await page.locator('input[name=date]').click()
    const panel = page.locator('.el-picker__popper:visible .el-picker-panel')
    await panel.waitFor()
    expect(await inside(page, panel)).toBe(true)
    // The chosen day: a rounded square in the accent, not the stock circle.
    const chosen = panel.locator('td.current .el-date-table-cell__text')
    expect(await chosen.evaluate((e) => getComputedStyle(e).borderRadius)).toBe('6px')
    await settled(panel)
    await screenshot(page, 'phone-forms-calendar')
    await page.keyboard.press('Escape')
    await panel.waitFor({ state: 'hidden' })

    const save = dialog.locator('[data-test=save-session]')
    await save.scrollIntoViewIfNeeded()
    expect(await inside(page, save, true)).toBe(true)
    expect(await inside(page, dialog.getByRole('button', { name: 'Cancel' }), true)).toBe(true)
    await save.click()
    await page.waitForURL(/\/captures\/\d+$/)
    await expect.poll(() => page.locator('[data-test=session-facts]').innerText()).toContain('Pocket recorder')
    await page.context().close()
  })

  it('Edit capture session fits the phone as well', async () => {
    const page = await pageAs('recordist@example.test', PHONE)
    await page.goto(`${server.url}/captures/${sessionId}`)
    await page.locator('[data-test=edit-session]').click()
    const dialog = page.locator('.el-dialog', { hasText: 'Edit capture session' })
    await dialog.waitFor()
    await expect.poll(() => inside(page, dialog)).toBe(true)
    const save = dialog.locator('[data-test=save-session]')
    await save.scrollIntoViewIfNeeded()
    expect(await inside(page, save, true)).toBe(true)
    await screenshot(page, 'phone-forms-edit-session')
    await page.context().close()
  })
  it('on a desktop the form keeps its columns at 640 px', async () => {
    const page = await pageAs('recordist@example.test', DESKTOP)
    await page.goto(`${server.url}/captures`)
    await page.locator('[data-test=new-session]').click()
    const dialog = page.locator('.el-dialog', { hasText: 'New capture session' })
    await dialog.waitFor()
    await expect.poll(async () => Math.round((await dialog.boundingBox())!.width)).toBe(640)
    const title = (await dialog.locator('input[name=title]').boundingBox())!
    const date = (await dialog.locator('input[name=date]').boundingBox())!
    expect(Math.abs(title.y - date.y), 'title and date share a line').toBeLessThan(4)
    await screenshot(page, 'phone-forms-new-session-desktop')
    await page.context().close()
  })
})

describe('sorting the library on a phone', () => {
  const titles = (page: Page) => page.locator('[data-test=library-table] [data-take] .c-title .t').allInnerTexts()

  it('sorts the cards by the phone control, into the same URL as the headers', async () => {
    const page = await pageAs('designer@example.test', PHONE)
    await page.goto(`${server.url}/library`)
    await page.locator('[data-test=library-table] [data-take]').first().waitFor({ timeout: 15_000 })
    // The headers' sort buttons are folded away on a phone; the control stands in.
    expect(await page.locator('[data-test=library-table] thead').isVisible()).toBe(false)
    const by = page.locator('[data-test=sort-by]')
    expect(await by.isVisible()).toBe(true)
    expect(await inside(page, page.locator('[data-test=library-sort]'))).toBe(true)

    await by.selectOption({ label: 'Length' })
    await expect.poll(() => new URL(page.url()).searchParams.get('sort')).toBe('duration')
    expect(new URL(page.url()).searchParams.get('order')).toBe('asc')
    await expect.poll(() => titles(page)).toEqual(['charger_whine', 'router_buzz', 'fridge_hum'])

    // The way round, from the keyboard: Tab from the column to the order buttons, then Space.
    await by.focus()
    await page.keyboard.press('Tab')
    await page.keyboard.press('Tab')
    expect(await page.evaluate(() => document.activeElement?.textContent?.trim())).toMatch(/High to low$/)
    await page.keyboard.press('Space')
    await expect.poll(() => new URL(page.url()).searchParams.get('order')).toBe('desc')
    await expect.poll(() => titles(page)).toEqual(['fridge_hum', 'router_buzz', 'charger_whine'])
    expect(
      await page.locator('[data-test=sort-order] button[aria-pressed=true]').innerText(),
      'the pressed way says so in words',
    ).toMatch(/High to low/)
    await screenshot(page, 'phone-forms-library-sorted')
    await page.context().close()
  })

  it('reads the order a desktop header wrote', async () => {
    const desk = await pageAs('designer@example.test', DESKTOP)
    await desk.goto(`${server.url}/library`)
    await desk.locator('[data-test=library-table] [data-take]').first().waitFor({ timeout: 15_000 })
    expect(await desk.locator('[data-test=sort-by]').isVisible()).toBe(false)
    await desk.locator('thead button.sort', { hasText: 'Take' }).click()
    await desk.locator('thead button.sort', { hasText: 'Take' }).click()
    await expect.poll(() => new URL(desk.url()).searchParams.get('order')).toBe('desc')
    const url = desk.url()
    await desk.context().close()

    const page = await pageAs('designer@example.test', PHONE)
    await page.goto(url)
    await page.locator('[data-test=library-table] [data-take]').first().waitFor({ timeout: 15_000 })
    expect(await page.locator('[data-test=sort-by]').inputValue()).toBe('title')
    expect(await page.locator('[data-test=sort-order] button[aria-pressed=true]').innerText()).toMatch(/Z to A/)
    await expect.poll(() => titles(page)).toEqual(['router_buzz', 'fridge_hum', 'charger_whine'])
    await page.context().close()
  })
})

describe('the listening bench on a phone', () => {
  it('a typed region name replaces the suggested one; notices sit under the row, covering no button', async () => {
    const page = await pageAs('designer@example.test', PHONE)
    await page.goto(`${server.url}/takes/${ids.fridge_hum}`)
    const wave = page.locator('[data-test=waveform]')
    await wave.locator('canvas').first().waitFor({ timeout: 20_000 })
    await page.locator('img[data-test=spectrogram]').waitFor({ timeout: 20_000 })
    await wave.scrollIntoViewIfNeeded()
    const w = (await wave.boundingBox())!
    const y = w.y + w.height / 2
    await page.mouse.move(w.x + w.width * 0.2, y)
    await page.mouse.down()
    await page.mouse.move(w.x + w.width * 0.4, y, { steps: 5 })
    await page.mouse.move(w.x + w.width * 0.6, y, { steps: 5 })
    await page.mouse.up()
    await page.locator('[data-test=selection-start]').waitFor()

    // Air between the player box and the selection row.
    const player = (await page.locator('[data-test=now-playing]').first().boundingBox())!
    const row = (await page.locator('.selection-row').boundingBox())!
    expect(row.y - (player.y + player.height)).toBeGreaterThanOrEqual(6)

    await page.locator('[data-test=save-region]').click()
    const name = page.locator('[data-test=region-name]')
    await name.waitFor({ timeout: 15_000 })
    expect(await name.inputValue()).toBe('Region 1')
    // A click into the field keeps the suggestion selected, so typing replaces it.
    await name.click()
    await page.keyboard.type('steady hum')
    expect(await name.inputValue()).toBe('steady hum')
    await page.keyboard.press('Enter')
    await expect.poll(() => page.locator('.regions').innerText()).toMatch(/steady hum ·/)

    // Add the selection to a pack: the notice shows in the flow under the row, over no button.
    const add = page.locator('[data-test=add-to-pack]')
    await add.locator('.el-select').first().click()
    await page.locator('.el-select-dropdown__item:visible', { hasText: 'Hallway beds' }).click({ timeout: 15_000 })
    await add.getByRole('button', { name: /Add selection to pack/ }).click()
    const notice = page.locator('[data-test=notice-slot-bench-selection] [data-test=notice]')
    await screenshot(page, 'phone-forms-bench-adding')
    await expect.poll(() => notice.innerText(), { timeout: 10_000 }).toMatch(/added to the pack/)
    const n = (await notice.boundingBox())!
    for (const b of await page.locator('.selection-row button, .regions button').all()) {
      const r = await b.boundingBox()
      if (!r) continue
      const overlaps = n.x < r.x + r.width && r.x < n.x + n.width && n.y < r.y + r.height && r.y < n.y + n.height
      expect(overlaps, await b.innerText()).toBe(false)
    }
    await screenshot(page, 'phone-forms-bench-notice')

    // The keys panel fits the phone.
    await page.keyboard.press('?')
    const keys = page.locator('.el-dialog', { hasText: 'Keys on the listening bench' })
    await keys.waitFor({ timeout: 15_000 })
    // Polled: the dialog grows into place.
    await expect.poll(() => inside(page, keys)).toBe(true)
    await expect.poll(() => inside(page, keys.locator('.el-dialog__headerbtn'), true)).toBe(true)
    await screenshot(page, 'phone-forms-keys')
    await page.context().close()
  })
})

describe('pickers in our own look', () => {
  for (const size of [PHONE, DESKTOP]) {
    it(`one focus ring, our list, tags and words (${size.width} px)`, async () => {
      const page = await pageAs('designer@example.test', size)
      await page.goto(`${server.url}/library`)
      await page.locator('[data-test=library-table] [data-take]').first().waitFor({ timeout: 15_000 })
      if (size === PHONE) await page.getByRole('button', { name: /^Filters/ }).click()
      const source = page.locator('[data-test=filter-source]')
      await source.click()
      const wrapper = source.locator('.el-select__wrapper')
      const input = source.locator('input')
      // One ring: the field's outline in the focus colour; the text box inside draws none.
      await expect.poll(() => wrapper.evaluate((e) => getComputedStyle(e).outlineStyle)).toBe('solid')
      expect(await input.evaluate((e) => getComputedStyle(e).outlineStyle)).toBe('none')
      expect(await wrapper.evaluate((e) => getComputedStyle(e).boxShadow)).not.toMatch(/ 2px/)

      const list = page.locator('.el-select__popper:visible')
      await list.waitFor()
      expect(await list.locator('.el-popper__arrow').evaluate((e) => getComputedStyle(e).display)).toBe('none')
      await page.keyboard.press('ArrowDown')
      await page.keyboard.press('Enter')
      await expect.poll(() => new URL(page.url()).searchParams.getAll('sourceId').length).toBe(1)
      // The chosen option: an accent bar on its left (a shape, not colour alone) and bold words.
      const chosen = list.locator('.el-select-dropdown__item.is-selected')
      expect(await chosen.evaluate((e) => getComputedStyle(e).boxShadow)).toMatch(/inset/)
      expect(Number(await chosen.evaluate((e) => getComputedStyle(e).fontWeight))).toBeGreaterThanOrEqual(600)
      // Its tag in the field: a capsule.
      const tag = source.locator('.el-tag').first()
      expect(await tag.evaluate((e) => getComputedStyle(e).borderRadius)).toBe('999px')
      await settled(list)
      await screenshot(page, `phone-forms-picker-${size.width}`)

      // A name that matches nothing gets our own words.
      await page.keyboard.type('zzz no such device')
      await expect.poll(() => list.locator('.el-select-dropdown__empty').innerText()).toBe('Nothing by that name here')
      await page.keyboard.press('Escape')

      // The native selects wear the same caret as the component selects.
      const caret = await source.locator('.el-select__caret').evaluate((e) => getComputedStyle(e).backgroundImage)
      expect(caret).toMatch(/^url\("data:image\/svg/)
      for (const t of ['filter-character', 'filter-note-outcome'])
        expect(await page.locator(`[data-test=${t}]`).evaluate((e) => getComputedStyle(e).backgroundImage), t).toBe(
          caret,
        )

      // The light theme: the same shapes, its own caret ink.
      if (size === DESKTOP) {
        await page.locator('[data-test=theme-toggle]').click()
        await expect.poll(() => page.evaluate(() => document.documentElement.classList.contains('dark'))).toBe(false)
        await expect
          .poll(() => source.locator('.el-select__caret').evaluate((e) => getComputedStyle(e).backgroundImage))
          .not.toBe(caret)
        await page.locator('[data-test=filter-tag]').click()
        const tags = page.locator('.el-select__popper:visible')
        await tags.waitFor({ timeout: 15_000 })
        await settled(tags)
        await screenshot(page, 'phone-forms-picker-1440-light')
      }
      await page.context().close()
    })
  }
})
