// Typing over the logging sheet at speed, in Debian's Chromium: a pre-filled device cell entered by a
// click has its text selected, so typing replaces it (as in a spreadsheet) instead of landing in the
// middle; a misspelt device followed by more typing and Enter makes no device by accident (the question
// keeps the focus on its confirm button and sets stray keys aside); Escape goes back to the cell with the
// text, which says it is not saved once the cell is left; a new device made on purpose still is.
// Desktop and phone sizes.
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'
import { signedIn } from '../helpers/server'
import { createSession, soxWav, uploadTake } from '../helpers/uploads'

const env = useBrowserServer()

describe('typing on the logging sheet', () => {
  it.each([
    { size: 'desktop', viewport: { width: 1440, height: 900 }, hz: 300 },
    { size: 'phone', viewport: { width: 390, height: 844 }, hz: 500 },
  ])('$size: typing replaces a pre-filled device; no device is made by accident', async (c) => {
    const designer = await signedIn(env.server.url, 'designer')
    const rec = await signedIn(env.server.url, 'recordist')
    const charger = (
      await designer.post('/api/sources', { name: `Bench laptop charger ${c.size}`, kind: 'power-supply' }).expect(201)
    ).body.source
    await designer.post('/api/sources', { name: `Desk lamp ${c.size}`, kind: 'other' }).expect(201)
    const session = await createSession(rec, { title: `Typing fast ${c.size}` })
    const file = soxWav(path.join(env.server.dir, c.size, 'T001.WAV'), { seconds: 1, synth: ['sine', String(c.hz)] })
    const take = (await uploadTake(rec, session.id, file, 'T001.WAV')).body.take
    await rec.patch(`/api/takes/${take.id}`, { sources: [{ sourceId: charger.id, state: 'charging' }] }).expect(200)
    const catalogue = async () =>
      ((await designer.get('/api/sources').expect(200)).body.sources as { name: string }[]).map((s) => s.name)
    const before = await catalogue()

    const page = await env.browser.newPage({ viewport: c.viewport })
    await signInThroughForm(page, env.server.url, 'recordist@example.test')
    await page.goto(`${env.server.url}/captures/${session.id}`)
    const cell = page.locator('[data-test=log-row] input[data-test=log-device]').first()
    await expect.poll(() => cell.inputValue()).toBe(`Bench laptop charger ${c.size}`)

    // A click in the middle of the pre-filled name, then typing: the name is replaced, not split.
    await cell.scrollIntoViewIfNeeded()
    const box = (await cell.boundingBox())!
    await page.mouse.click(box.x + box.width * 0.4, box.y + box.height / 2)
    await page.keyboard.type(`Desk lamp ${c.size}`)
    expect(await cell.inputValue()).toBe(`Desk lamp ${c.size}`)
    await page.keyboard.press('Enter')
    await expect
      .poll(async () => (await rec.get(`/api/takes/${take.id}`).expect(200)).body.take.sources[0]?.name)
      .toBe(`Desk lamp ${c.size}`)

    // A misspelt name, Enter, then the next value typed on at speed with its Enter: nothing is made.
    await cell.click()
    await page.keyboard.type('Bench lapr')
    await page.keyboard.press('Enter')
    const prompt = page.locator('[data-test=add-device]')
    await expect.poll(() => prompt.innerText()).toContain('No device called “Bench lapr” yet')
    expect(await page.evaluate(() => document.activeElement?.getAttribute('data-test'))).toBe('add-device-confirm')
    await page.keyboard.type('idle')
    await page.keyboard.press('Enter')
    await expect.poll(() => page.locator('[data-test=add-device-set-aside]').isVisible()).toBe(true)
    expect(await page.locator('[data-test=add-device-kind]').inputValue()).toBe('other')
    await screenshot(page, `logsheet-typing-${c.size}-question`)
    expect(await catalogue()).toEqual(before)

    // Escape: back in the cell with the text, to correct it.
    await page.keyboard.press('Escape')
    await expect.poll(() => prompt.count()).toBe(0)
    expect(await page.evaluate(() => document.activeElement?.getAttribute('data-test'))).toBe('log-device')
    expect(await cell.inputValue()).toBe('Bench lapr')

    // On purpose: a new name, Enter, then Enter on the question makes the device and links it.
    await page.keyboard.press('Backspace')
    await page.keyboard.type(`top ${c.size}`)
    await page.keyboard.press('Enter')
    await expect.poll(() => prompt.innerText()).toContain(`No device called “Bench laptop ${c.size}” yet`)
    await page.keyboard.press('Enter')
    await expect.poll(() => prompt.count()).toBe(0)
    expect(await catalogue()).toEqual(expect.arrayContaining([...before, `Bench laptop ${c.size}`]))
    expect((await catalogue()).length).toBe(before.length + 1)
    await expect
      .poll(async () => (await rec.get(`/api/takes/${take.id}`).expect(200)).body.take.sources[0]?.name)
      .toBe(`Bench laptop ${c.size}`)
    await screenshot(page, `logsheet-typing-${c.size}-made`)

    // Escape on the question, then a click away: the cell keeps the typed text and says it is not saved.
    const made = await catalogue()
    await cell.click()
    await page.keyboard.type('Bench lapz')
    await page.keyboard.press('Enter')
    await expect.poll(() => prompt.innerText()).toContain('No device called “Bench lapz” yet')
    await page.keyboard.press('Escape')
    await expect.poll(() => prompt.count()).toBe(0)
    const note = page.locator('[data-test=log-row]').first().locator('[data-test=log-unsaved]')
    expect(await note.count(), 'no note while the cell is being edited').toBe(0)
    await page.locator('[data-test=log-row] .format').first().click()
    await expect
      .poll(() => note.innerText())
      .toContain(`Not saved: in the cell, Enter keeps it, Escape puts back “Bench laptop ${c.size}”`)
    expect(await cell.inputValue()).toBe('Bench lapz')
    await screenshot(page, `logsheet-typing-${c.size}-unsaved`)
    // Back in the cell, Escape puts the saved device back and the note goes.
    await cell.click()
    await page.keyboard.press('Escape')
    await expect.poll(() => note.count()).toBe(0)
    expect(await cell.inputValue()).toBe(`Bench laptop ${c.size}`)
    expect(await catalogue()).toEqual(made)
    await page.close()
  })
})
