// Delivery as people do it, in Debian's Chromium: a designer types a naming
// template and watches the output names change, publishes a version with a
// typed "what changed" note, and the follower's e-mail (caught by a test SMTP
// server) carries it; the producer lands on Packs and reads the note; someone
// without an account opens a share link, plays one item and downloads it alone
// (the bytes compared with the file Info-ZIP unzip takes out of the zip).
// Desktop 1440 × 900 and phone 390 × 844, with screenshots to look at.
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, Page } from 'playwright-core'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { startTestSmtp } from '../helpers/smtp'
import { launchBrowser, screenshot } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

const DESKTOP = { width: 1440, height: 900 }
const PHONE = { width: 390, height: 844 }

let smtp: Awaited<ReturnType<typeof startTestSmtp>>
let server: TestServer
let browser: Browser
let designer: Client
let packId: number
let v2Id: number
const takeIds: number[] = []

async function waitBuild(id: number) {
  for (let i = 0; i < 600; i++) {
    const b = (await designer.get(`/api/pack-builds/${id}`)).body.build
    if (b.status === 'done' || b.status === 'failed') return b
    await new Promise((r) => setTimeout(r, 100))
  }
  throw new Error(`build ${id} did not end`)
}

/** Signs in the way a person does: types the address and password, then presses the button. */
async function signIn(page: Page, email: string) {
  await page.goto(`${server.url}/sign-in`)
  await page.locator('input[name=email]').first().click()
  await page.keyboard.type(email)
  await page.locator('input[name=password]').first().click()
  await page.keyboard.type('strayfield-demo')
  await page.locator('[data-test=sign-in]').click()
  await page.waitForURL((u) => !u.pathname.startsWith('/sign-in'))
}

/**
 * How far the view's own content runs past the right edge (the phone check); the top navigation
 * is left out (it belongs to the app shell and has its own check).
 */
const overflow = (page: Page, root = '.sf-page') =>
  page.evaluate(
    (sel) =>
      Math.max(
        0,
        ...[...document.querySelectorAll(`${sel}, ${sel} *`)].map(
          (e) => e.getBoundingClientRect().right - window.innerWidth,
        ),
      ),
    root,
  )

beforeAll(async () => {
  smtp = await startTestSmtp()
  server = await startTestServer({ clientDir: path.resolve('dist'), smtpUrl: smtp.url, mailCatcher: false })
  designer = await signedIn(server.url, 'designer')
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Delivery sources' })
  for (const [name, synth] of [
    ['mains_hum', ['sine', '50']],
    ['charger_whine', ['sine', '7000']],
    ['fan_buzz', ['square', '120']],
  ] as const) {
    const f = soxWav(path.join(server.dir, `${name}.wav`), { seconds: 3, synth: [...synth] })
    takeIds.push((await waitForTake(rec, (await uploadTake(rec, s.id, f, `${name}.wav`)).body.take.id)).id)
  }
  const pack = (
    await designer.post('/api/packs', { name: 'Bench deliveries', description: 'Hums and whines for the mix' })
  ).body.pack
  packId = pack.id
  await designer
    .post(`/api/packs/${packId}/items/batch`, { items: takeIds.slice(0, 2).map((takeId) => ({ takeId })) })
    .expect(201)
  const v1 = await waitBuild((await designer.post(`/api/packs/${packId}/builds`).expect(202)).body.build.id)
  await designer.post(`/api/pack-builds/${v1.id}/publish`, { note: 'First two sounds.' }).expect(200)
  const producer = await signedIn(server.url, 'producer')
  await producer.post(`/api/packs/${packId}/follow`).expect(200)
  // v2 adds the third take; it waits for the designer to publish it in the browser.
  await designer.post(`/api/packs/${packId}/items`, { takeId: takeIds[2] }).expect(201)
  v2Id = (await waitBuild((await designer.post(`/api/packs/${packId}/builds`).expect(202)).body.build.id)).id
  browser = await launchBrowser()
}, 180_000)

afterAll(async () => {
  await browser?.close()
  await server?.stop()
  await smtp?.close()
})

describe('delivery in the browser', () => {
  it('designer: types a naming template and sees every output name change as it is typed', async () => {
    const page = await browser.newPage({ viewport: DESKTOP })
    await signIn(page, 'designer@example.test')
    await page.goto(`${server.url}/packs/${packId}`)
    const field = page.locator('input[name=naming-template]')
    await field.click()
    await page.keyboard.press('ControlOrMeta+a')
    await page.keyboard.type('{take}-{kind}')
    await expect
      .poll(() => page.locator('[data-test=naming-preview] li').allInnerTexts())
      .toEqual(takeIds.map((id) => `${id}-one-shot.wav`))
    // Each token is explained beside the field.
    await expect.poll(() => page.locator('#naming-tokens').innerText()).toMatch(/\{region\}\s+the name of the region/)
    await page.keyboard.type('{colour}')
    await expect.poll(() => page.locator('[data-test=naming-preview]').innerText()).toMatch(/Unknown token/)
    await page.close()
  })

  it('designer: publishes with a typed note; the follower’s e-mail carries it', { timeout: 120_000 }, async () => {
    const page = await browser.newPage({ viewport: DESKTOP })
    await signIn(page, 'designer@example.test')
    await page.goto(`${server.url}/packs/${packId}`)
    await page.locator(`[data-build="${v2Id}"] [data-test=publish]`).click()
    const note = page.getByLabel('What changed')
    // Prefilled with what changed since version 1, and a blank line for the designer's own words.
    await expect.poll(() => note.inputValue()).toMatch(/^Added: .*fan_buzz.*\.wav\n\n$/)
    await note.click()
    await page.keyboard.press('Control+End')
    await page.keyboard.type('A fan buzz joins the hums; nothing else moved.')
    await screenshot(page, 'delivery-publish-dialog')
    await page.getByRole('button', { name: 'Publish version 2' }).click()
    await expect
      .poll(() => page.locator(`[data-build="${v2Id}"] [data-test=change-note]`).innerText())
      .toContain('A fan buzz joins the hums')

    const mail = await smtp.waitFor('producer@example.test')
    expect(mail.subject).toContain('version 2')
    expect(mail.text).toMatch(
      /What changed in version 2:\nAdded: .*fan_buzz.*\.wav\n+A fan buzz joins the hums; nothing else moved\./,
    )
    await screenshot(page, 'delivery-pack-designer-1440')
    await page.setViewportSize(PHONE)
    await expect.poll(() => overflow(page)).toBeLessThanOrEqual(0)
    await screenshot(page, 'delivery-pack-designer-390')
    await page.close()
  })

  it('producer: lands on Packs, reads what changed and downloads one item', { timeout: 120_000 }, async () => {
    for (const viewport of [DESKTOP, PHONE]) {
      const context = await browser.newContext({ viewport, acceptDownloads: true })
      const page = await context.newPage()
      await signIn(page, 'producer@example.test')
      expect(new URL(page.url()).pathname).toBe('/packs')
      await expect
        .poll(() => page.locator('[data-test=pack-list]').innerText())
        .toMatch(/[23] items[\s\S]*What changed: /)
      expect(await overflow(page)).toBeLessThanOrEqual(0)
      await screenshot(page, `delivery-packs-producer-${viewport.width}`)
      await page.getByRole('link', { name: /Bench deliveries/ }).click()
      await expect
        .poll(() => page.locator('[data-test=published-note]').innerText())
        .toContain('A fan buzz joins the hums')
      await expect.poll(() => page.locator('[data-test=pack-items] [data-item]').count()).toBe(3)
      const [download] = await Promise.all([
        page.waitForEvent('download'),
        page.locator('[data-test=item-download]').first().click(),
      ])
      const file = path.join(server.dir, `producer-${viewport.width}.wav`)
      await download.saveAs(file)
      expect(fs.readFileSync(file).subarray(8, 12).toString('latin1')).toBe('WAVE')
      const wide = await page.evaluate(() =>
        [...document.querySelectorAll('.sf-page *')]
          .filter((e) => e.getBoundingClientRect().right > window.innerWidth)
          .map((e) => `${e.tagName}.${e.className}`)
          .slice(0, 8),
      )
      expect(wide).toEqual([])
      expect(await overflow(page)).toBeLessThanOrEqual(0)
      await screenshot(page, `delivery-pack-producer-${viewport.width}`)
      await context.close()
    }
  })

  it(
    'share link without an account: lists the items, plays one, downloads it alone',
    { timeout: 120_000 },
    async () => {
      const link = (
        await designer
          .post(`/api/pack-builds/${v2Id}/share-links`, {
            expiresAt: new Date(Date.now() + 864e5).toISOString(),
            maxDownloads: 1,
          })
          .expect(201)
      ).body.link
      const zip = path.join(server.dir, 'v2.zip')
      fs.writeFileSync(
        zip,
        (
          await designer
            .get(`/api/pack-builds/${v2Id}/download`)
            .buffer(true)
            .parse((res, cb) => {
              const parts: Buffer[] = []
              res.on('data', (c: Buffer) => parts.push(c))
              res.on('end', () => cb(null, Buffer.concat(parts)))
            })
        ).body,
      )
      const url = link.url.replace(/^https?:\/\/[^/]+/, server.url)

      for (const viewport of [DESKTOP, PHONE]) {
        const context = await browser.newContext({ viewport, acceptDownloads: true })
        const page = await context.newPage()
        await page.goto(url)
        const rows = page.locator('[data-test=share-item]')
        await expect.poll(() => rows.count()).toBe(3)
        const texts = await rows.allInnerTexts()
        expect(texts.map((t) => t.match(/\b([123])\b/)?.[1])).toEqual(['1', '2', '3'])
        await expect.poll(() => page.locator('[data-test=now-playing-caution]').innerText()).toMatch(/Start quiet/)

        // Play the second item: the strip names it and its time moves.
        const second = rows.nth(1)
        const name = (await second.locator('.file').innerText()).trim()
        await second.getByRole('button', { name: /^Play / }).click()
        await expect.poll(() => page.locator('[data-test=now-playing-name]').innerText()).toBe(name)
        await expect
          .poll(() => page.locator('[data-test=now-playing-elapsed]').innerText(), { timeout: 10_000 })
          .toMatch(/^0:0(0\.[1-9]|[1-9]\.\d)$/)

        // Download it alone: the same bytes as the file in the zip (Info-ZIP unzip -p).
        const [download] = await Promise.all([
          page.waitForEvent('download'),
          second.getByRole('link', { name: `Download ${name} alone` }).click(),
        ])
        const file = path.join(server.dir, `share-${viewport.width}.wav`)
        await download.saveAs(file)
        expect(download.suggestedFilename()).toBe(name)
        const expected = execFileSync('unzip', ['-p', zip, name], { maxBuffer: 64 * 1024 * 1024 })
        expect(fs.readFileSync(file).equals(expected)).toBe(true)
        expect(await overflow(page, '[data-test=share]')).toBeLessThanOrEqual(0)
        await screenshot(page, `delivery-share-${viewport.width}`)
        await context.close()
      }
      // Two single items were downloaded; the link's one whole-pack download is still unused.
      const links = (await designer.get(`/api/pack-builds/${v2Id}/share-links`)).body.links
      expect(links[0].downloads).toBe(0)
    },
  )
})
