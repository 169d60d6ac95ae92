// A recordist, in Debian's Chromium, acting as a person: signs in by pressing
// Enter, creates a capture session with Enter, drops a card of twelve takes and
// logs every one on the logging sheet (a new device typed where it is needed,
// fill down, several rows at once) in under 30 interactions; then the same
// sheet on a phone.
import { execFileSync } from 'node:child_process'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import type { Page } from 'playwright-core'
import { screenshot, useBrowserServer } from '../helpers/browser'
import { Client, signedIn } from '../helpers/server'
import { soxWav } from '../helpers/uploads'
import { linkToken } from '../helpers/smtp'

const env = useBrowserServer()

async function typeInto(page: Page, selector: string, text: string) {
  await page.locator(selector).click()
  await page.keyboard.type(text)
}

describe('Enter submits the forms people expect it to', () => {
  it('signs in with Enter in the password field', async () => {
    const page = await env.browser.newPage({ viewport: { width: 1440, height: 900 } })
    await page.goto(`${env.server.url}/sign-in`)
    await typeInto(page, 'input[name=email]', 'designer@example.test')
    await page.keyboard.press('Tab')
    await page.keyboard.type('strayfield-demo')
    await page.keyboard.press('Enter')
    await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'), { timeout: 10_000 })
    await expect.poll(() => page.locator('body').innerText()).toContain('Library')
    await page.close()
  })

  it('shows the server’s sentence when Enter sends a wrong password, and asks for a reset link with Enter', async () => {
    const page = await env.browser.newPage({ viewport: { width: 390, height: 844 } })
    await page.goto(`${env.server.url}/sign-in`)
    await typeInto(page, 'input[name=email]', 'designer@example.test')
    await typeInto(page, 'input[name=password]', 'not the password')
    await page.keyboard.press('Enter')
    await expect.poll(() => page.locator('.el-alert').innerText()).toMatch(/\w/)
    expect(new URL(page.url()).pathname).toBe('/sign-in')

    // The address typed above is kept; Enter in it asks for the link.
    await page.getByRole('button', { name: 'Forgot your password?' }).click()
    await expect
      .poll(() => page.locator('[data-test=forgot-form] input[name=email]').inputValue())
      .toBe('designer@example.test')
    await page.locator('[data-test=forgot-form] input[name=email]').click()
    await page.keyboard.press('Enter')
    await expect.poll(() => page.locator('[data-test=forgot-form]').innerText()).toContain('reset link is on its way')
    await page.close()
  })
})

describe('Enter on the join and new-password pages', () => {
  it('joins the team with Enter in the password field, then sets a new password with Enter', async () => {
    const admin = await signedIn(env.server.url, 'admin')
    await admin.post('/api/invitations', { email: 'new.recordist@example.test', role: 'recordist' }).expect(201)
    const mailTo = async (to: string) => {
      const messages = (await admin.get('/api/outbox').expect(200)).body.messages as { to: string; text: string }[]
      return messages.find((m) => m.to.includes(to))?.text ?? ''
    }
    await expect.poll(() => mailTo('new.recordist@example.test'), { timeout: 10_000 }).toContain('/join/')
    const page = await env.browser.newPage({ viewport: { width: 390, height: 844 } })
    await page.goto(`${env.server.url}/join/${linkToken(await mailTo('new.recordist@example.test'), 'join')}`)
    await typeInto(page, 'input[name=name]', 'Wren Tallis')
    await page.keyboard.press('Tab')
    await page.keyboard.type('a-long-enough-password')
    await page.keyboard.press('Enter')
    await page.waitForURL((u) => !u.pathname.startsWith('/join'), { timeout: 10_000 })
    // Signed in as the new member (on a phone the name sits behind the Menu button, so ask the page's own session).
    await expect
      .poll(() => page.evaluate(async () => (await (await fetch('/api/auth/me')).json()).user?.name))
      .toBe('Wren Tallis')

    // A reset link (asked for on the sign-in page, as tested above), and Enter in its one field.
    const anon = new Client(env.server.url)
    await anon.refreshCsrf()
    await anon.post('/api/auth/password-reset', { email: 'new.recordist@example.test' }).expect(202)
    await expect.poll(() => mailTo('new.recordist@example.test'), { timeout: 10_000 }).toContain('/reset/')
    // Opened from the mail, signed out (a fresh browser context).
    await page.close()
    const resetPage = await env.browser.newPage({ viewport: { width: 390, height: 844 } })
    await resetPage.goto(`${env.server.url}/reset/${linkToken(await mailTo('new.recordist@example.test'), 'reset')}`)
    await typeInto(resetPage, 'input[name=password]', 'another-long-password')
    await resetPage.keyboard.press('Enter')
    await expect
      .poll(() => resetPage.locator('body').innerText(), { timeout: 10_000 })
      .toContain('Your password is changed')
    await resetPage.close()
  })
})

describe('the logging sheet', () => {
  it('logs a 12-take session with a new device, fill down and multi-select in under 30 interactions', async () => {
    const dir = path.join(env.server.dir, 'card')
    const files = Array.from({ length: 12 }, (_, i) =>
      soxWav(path.join(dir, `T${String(i + 1).padStart(3, '0')}.WAV`), {
        rate: 48000,
        bits: 16,
        channels: 1,
        seconds: 1,
        synth: ['sine', String(200 + i * 50)],
      }),
    )
    // The catalogue a designer keeps (the demo library is off in tests).
    const designer = await signedIn(env.server.url, 'designer')
    for (const [name, kind] of [
      ['Bench laptop charger', 'power-supply'],
      ['Desk fan motor', 'motor'],
      ['Desk monitor', 'display'],
    ]) {
      await designer.post('/api/sources', { name, kind }).expect(201)
    }
    const page = await env.browser.newPage({ viewport: { width: 1440, height: 900 } })
    let interactions = 0
    const act = async (what: () => Promise<unknown>) => {
      interactions++
      await what()
    }

    // Sign in and create the capture session, both with Enter (before the logging the count is about).
    await page.goto(`${env.server.url}/sign-in`)
    await typeInto(page, 'input[name=email]', 'recordist@example.test')
    await page.keyboard.press('Tab')
    await page.keyboard.type('strayfield-demo')
    await page.keyboard.press('Enter')
    await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'))
    await page.goto(`${env.server.url}/captures`)
    await page.locator('[data-test=new-session]').click()
    await typeInto(page, 'input[name=title]', 'Kitchen appliances, evening')
    await page.keyboard.press('Enter')
    await page.waitForURL(/\/captures\/\d+$/)

    // The card's twelve files, in one go (as a folder is dropped).
    await page.locator('[data-test=file-input]').setInputFiles(files)
    const rows = page.locator('[data-test=log-sheet] [data-test=log-row]')
    await expect.poll(() => rows.count(), { timeout: 60_000 }).toBe(12)
    await expect
      .poll(() => page.locator('[data-test=batch-summary]').innerText(), { timeout: 90_000 })
      .toMatch(/^12 of 12 measured/)
    // Sorted by file name, as the recorder wrote them.
    expect(await page.locator('[data-test=log-file]').allInnerTexts()).toEqual(files.map((f) => path.basename(f)))
    const device = (i: number) => rows.nth(i).locator('input[data-test=log-device]')
    const state = (i: number) => rows.nth(i).locator('input[data-test=log-state]')

    // Row 1: a device the catalogue lacks, added where it is typed; Enter on the kind adds it, focus goes to the state.
    // Every click, keystroke run (one typed word or name), key press and choice counts from here.
    await act(() => device(0).click())
    await act(() => page.keyboard.type('Bench fridge'))
    await act(() => page.keyboard.press('Enter'))
    await expect
      .poll(() => page.locator('[data-test=add-device]').innerText())
      .toContain('No device called “Bench fridge”')
    await act(() => page.locator('[data-test=add-device-kind]').selectOption({ label: 'Household appliances' }))
    await act(() => page.keyboard.press('Enter'))
    await expect.poll(() => page.evaluate(() => document.activeElement?.getAttribute('data-test'))).toBe('log-state')
    await act(() => page.keyboard.type('compressor running'))
    await act(() => page.keyboard.press('Enter'))
    await expect.poll(() => state(0).inputValue()).toBe('compressor running')

    // Rows 1–5 selected (click, Shift+click) and filled down from the first.
    await act(() => rows.nth(0).locator('[data-test=log-select]').click())
    await act(() =>
      rows
        .nth(4)
        .locator('[data-test=log-select]')
        .click({ modifiers: ['Shift'] }),
    )
    await expect.poll(() => page.locator('[data-test=log-bulk]').innerText()).toContain('5 selected')
    await act(() => page.locator('[data-test=log-fill-down]').click())
    await expect.poll(() => device(4).inputValue()).toBe('Bench fridge')
    await expect.poll(() => state(4).inputValue()).toBe('compressor running')

    // Row 6: an existing device, Tab to its state, Enter; row 7 from the row above with Ctrl+D.
    await act(() => device(5).click())
    await act(() => page.keyboard.type('Bench laptop charger'))
    await act(() => page.keyboard.press('Tab'))
    await act(() => page.keyboard.type('charging'))
    await act(() => page.keyboard.press('Enter'))
    await expect.poll(() => state(5).inputValue()).toBe('charging')
    await expect
      .poll(() => page.evaluate(() => document.activeElement?.closest('tr')?.getAttribute('data-take')))
      .toBe(await rows.nth(6).getAttribute('data-take'))
    await act(() => page.keyboard.press('Control+d'))
    await expect.poll(() => device(6).inputValue()).toBe('Bench laptop charger')

    // Rows 8–12 at once (the filled rows were let go): select, then type device and state into the bulk bar and press Enter.
    await expect.poll(() => page.locator('[data-test=log-bulk]').count()).toBe(0)
    await act(() => rows.nth(7).locator('[data-test=log-select]').click())
    await act(() =>
      rows
        .nth(11)
        .locator('[data-test=log-select]')
        .click({ modifiers: ['Shift'] }),
    )
    await act(() => page.locator('[data-test=log-bulk-device]').click())
    await act(() => page.keyboard.type('Desk fan motor'))
    await act(() => page.keyboard.press('Tab'))
    await act(() => page.keyboard.type('speed 2'))
    await act(() => page.keyboard.press('Enter'))
    await expect.poll(() => state(11).inputValue()).toBe('speed 2')

    expect(interactions).toBeLessThan(30)

    // Nothing is left without a device: the filter shows none, and the server holds all twelve.
    await page.locator('[data-test=filter-no-device]').check()
    await expect.poll(() => rows.count()).toBe(0)
    await page.locator('[data-test=filter-no-device]').uncheck()
    const client = await signedIn(env.server.url, 'recordist')
    const sessionId = Number(new URL(page.url()).pathname.split('/').pop())
    const takes = (await client.get(`/api/takes?sessionId=${sessionId}&sort=filename&order=asc`).expect(200)).body
      .items as {
      filename: string
      sources: { name: string; kind: string; state: string }[]
    }[]
    expect(
      takes.map((t) => `${t.filename}: ${t.sources.map((s) => `${s.name} (${s.kind}) ${s.state}`).join('; ')}`),
    ).toEqual([
      ...[1, 2, 3, 4, 5].map((i) => `T00${i}.WAV: Bench fridge (appliance) compressor running`),
      'T006.WAV: Bench laptop charger (power-supply) charging',
      'T007.WAV: Bench laptop charger (power-supply) charging',
      ...[8, 9, 10, 11, 12].map((i) => `T${String(i).padStart(3, '0')}.WAV: Desk fan motor (motor) speed 2`),
    ])

    // Sort by device: the fan's rows come first after the fridge's (alphabetical), by clicking the header.
    await page.getByRole('button', { name: /^Source device/ }).click()
    await expect.poll(() => device(0).inputValue()).toBe('Bench fridge')
    await expect.poll(() => device(11).inputValue()).toBe('Desk fan motor')
    await page.getByRole('button', { name: /^Source device/ }).click()
    await expect.poll(() => device(0).inputValue()).toBe('Desk fan motor')
    await page.locator('[data-test=log-sort]').selectOption('filename')
    await screenshot(page, 'logsheet-desktop')

    // The same sheet on a phone: rows are cards, and a cell can still be typed into.
    await page.setViewportSize({ width: 390, height: 844 })
    await device(0).click()
    await page.keyboard.press('Control+a')
    await page.keyboard.type('Desk monitor')
    await page.keyboard.press('Enter')
    await expect
      .poll(
        async () =>
          (await client.get(`/api/takes?sessionId=${sessionId}&sort=filename&order=asc`)).body.items[0].sources[0].name,
      )
      .toBe('Desk monitor')
    await screenshot(page, 'logsheet-phone')
    // The cell spans the card (390 px less the page's and the card's padding), and the sheet fits the screen's width.
    const box = await device(0).boundingBox()
    expect(box!.width).toBeGreaterThanOrEqual(240)
    const sheet = await page.locator('[data-test=log-sheet]').boundingBox()
    expect(sheet!.x).toBeGreaterThanOrEqual(0)
    expect(sheet!.x + sheet!.width).toBeLessThanOrEqual(390)
    await page.close()
  }, 180_000)

  it('flags clipped, over-the-ceiling and too-quiet takes in words; removes a take with a confirmation, offers Undo, and lists it under Removed takes', async () => {
    const client = await signedIn(env.server.url, 'recordist')
    const session = (
      await client.post('/api/capture-sessions', { title: 'Removal test', date: '2026-11-30' }).expect(201)
    ).body.session
    const file = soxWav(path.join(env.server.dir, 'rm', 'WRONG.WAV'), { seconds: 1, synth: ['sine', '300'] })
    await client.agent
      .post(`/api/capture-sessions/${session.id}/takes`)
      .set('x-csrf-token', client.token)
      .attach('file', file, 'WRONG.WAV')
      .expect(201)
    // Two takes with something wrong, made by sox: one far below the −70 LUFS gate, one driven past full scale (sox clips it).
    const quiet = soxWav(path.join(env.server.dir, 'rm', 'QUIET.WAV'), {
      seconds: 1,
      synth: ['sine', '300', 'vol', '0.0001'],
    })
    const loud = path.join(env.server.dir, 'rm', 'LOUD.WAV')
    execFileSync('sox', ['-n', '-r', '48000', '-b', '24', '-c', '1', loud, 'synth', '1', 'sine', '300', 'vol', '2'], {
      stdio: 'ignore',
    })
    for (const [f, name] of [
      [quiet, 'QUIET.WAV'],
      [loud, 'LOUD.WAV'],
    ]) {
      await client.agent
        .post(`/api/capture-sessions/${session.id}/takes`)
        .set('x-csrf-token', client.token)
        .attach('file', f, name)
        .expect(201)
    }

    const page = await env.browser.newPage({ viewport: { width: 1440, height: 900 } })
    await page.goto(`${env.server.url}/sign-in`)
    await typeInto(page, 'input[name=email]', 'recordist@example.test')
    await typeInto(page, 'input[name=password]', 'strayfield-demo')
    await page.keyboard.press('Enter')
    await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'))
    await page.goto(`${env.server.url}/captures/${session.id}`)
    const rows = page.locator('[data-test=log-row]')
    await expect.poll(() => rows.count()).toBe(3)
    // Flags in words (never colour alone), once measured.
    const row = (name: string) => page.locator('[data-test=log-row]', { hasText: name })
    const flags = async (name: string) =>
      ((await row(name).locator('[data-test=take-flags]').count())
        ? ((await row(name).locator('[data-test=take-flags]').textContent()) ?? '')
        : ''
      )
        .replace(/\s+/g, ' ')
        .replace(/ :/g, ':')
    await expect
      .poll(() => flags('QUIET.WAV'), { timeout: 60_000 })
      .toContain('Too quiet to measure: below the −70 LUFS gate')
    // sox clips the peaks of a 300 Hz sine at twice full scale into flat runs of about half a millisecond.
    await expect.poll(() => flags('LOUD.WAV'), { timeout: 60_000 }).toMatch(/Clipped: [\d.<]+ % clipped, longest 1 ms/)
    expect(await flags('LOUD.WAV')).toMatch(/Over the ceiling: true peak [−\d.]+ dBTP, above the −1 dBTP ceiling/)
    await expect.poll(() => row('WRONG.WAV').locator('[data-test=take-flags]').count()).toBe(0)
    await screenshot(page, 'logsheet-flags')

    // Auditioning from the sheet: play a row, then N and P walk the rows in the sheet's order (by file name).
    const strip = page.locator('[data-test=now-playing]')
    await page.getByRole('button', { name: 'Play LOUD.WAV' }).click()
    await expect.poll(() => strip.innerText()).toContain('LOUD')
    await page.keyboard.press('n')
    await expect.poll(() => strip.innerText()).toContain('QUIET')
    await page.keyboard.press('p')
    await expect.poll(() => strip.innerText()).toContain('LOUD')

    await page.getByRole('button', { name: 'Remove WRONG.WAV' }).click()
    await expect.poll(() => page.locator('[data-test=confirm-dialog]').innerText()).toContain('30 days')
    await page.getByRole('button', { name: 'Remove the take' }).click()
    await expect.poll(() => rows.count()).toBe(2)
    await expect.poll(() => page.locator('[data-test=removed-notice]').innerText()).toContain('Removed “WRONG.WAV”')
    await page.locator('[data-test=removed-takes] summary').click()
    await expect.poll(() => page.locator('[data-test=removed-takes]').innerText()).toContain('WRONG.WAV')
    await page.locator('[data-test=undo-remove]').click()
    await expect.poll(() => rows.count()).toBe(3)
    await expect.poll(() => page.locator('[data-test=removed-takes]').count()).toBe(0)
    await page.close()
  }, 120_000)
})
