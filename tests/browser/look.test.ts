// Every view at a phone (390 × 844), a tablet (768 × 1024) and a desktop
// (1440 × 900) size, in both themes, in Debian's Chromium:
// - nothing overflows sideways (document.documentElement.scrollWidth ≤ the viewport width);
// - the navigation reaches every area the role may see, and sign out (through
//   the "Menu" button where the bar folds), with touch targets ≥ 40 px on the phone;
// - axe-core (@axe-core/playwright, WCAG 2.0/2.1 A and AA rules, which include
//   1.4.3 contrast) finds nothing of impact "serious" or "critical";
// - a screenshot of each is saved to tests/.artifacts/screenshots/look/.
// A failure names the view, the size, the theme and what was found.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { AxeBuilder } from '@axe-core/playwright'
import type { Browser, BrowserContext, Page } from 'playwright-core'
import { can, type Role } from '@shared/permissions'
import { AREAS } from '@/router/areas'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

const SIZES = [
  { name: 'phone', width: 390, height: 844 },
  { name: 'tablet', width: 768, height: 1024 },
  { name: 'desktop', width: 1440, height: 900 },
] as const
const THEMES = ['dark', 'light'] as const
/** Where the bar folds its areas into the "Menu" button (TheNavBar.vue). */
const FOLDS_BELOW = 900

type Who = Role | 'nobody'
interface View {
  name: string
  who: Who
  path: () => string
}

let server: TestServer
let browser: Browser
const ids = { session: 0, take: 0, pack: 0, share: '' }

const VIEWS: View[] = [
  { name: 'sign-in', who: 'nobody', path: () => '/sign-in' },
  { name: 'join', who: 'nobody', path: () => '/join/an-invitation-token-for-the-look' },
  { name: 'reset', who: 'nobody', path: () => '/reset/a-reset-token-for-the-look' },
  { name: 'share', who: 'nobody', path: () => `/share/${ids.share}` },
  { name: 'not-found', who: 'nobody', path: () => '/no/such/page' },
  { name: 'captures', who: 'recordist', path: () => '/captures' },
  { name: 'capture', who: 'recordist', path: () => `/captures/${ids.session}` },
  { name: 'not-allowed', who: 'recordist', path: () => '/team' },
  { name: 'library', who: 'designer', path: () => '/library' },
  { name: 'bench', who: 'designer', path: () => `/takes/${ids.take}` },
  { name: 'tag manager', who: 'designer', path: () => '/library/tags' },
  { name: 'sources', who: 'designer', path: () => '/sources' },
  { name: 'packs', who: 'designer', path: () => '/packs' },
  { name: 'pack', who: 'designer', path: () => `/packs/${ids.pack}` },
  { name: 'packs (producer)', who: 'producer', path: () => '/packs' },
  { name: 'team', who: 'admin', path: () => '/team' },
  { name: 'outbox', who: 'admin', path: () => '/outbox' },
]

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec = await signedIn(server.url, 'recordist')
  ids.session = (await createSession(rec, { title: 'Bench sweep for the look' })).id
  for (const [name, synth] of [
    ['charger_whine', ['sine', '9000']],
    ['mains_hum', ['sine', '50']],
  ] as const) {
    const f = soxWav(path.join(server.dir, `${name}.wav`), { seconds: 3, synth: [...synth] })
    const take = await waitForTake(rec, (await uploadTake(rec, ids.session, f, `${name}.wav`)).body.take.id)
    ids.take ||= take.id
  }
  const designer = await signedIn(server.url, 'designer')
  ids.pack = (await designer.post('/api/packs', { name: 'Look check pack', description: 'Two takes' })).body.pack.id
  await designer.post(`/api/packs/${ids.pack}/items`, { takeId: ids.take })
  let build = (await designer.post(`/api/packs/${ids.pack}/builds`)).body.build
  for (const end = Date.now() + 90_000; build.status !== 'done' && build.status !== 'failed' && Date.now() < end;) {
    await new Promise((r) => setTimeout(r, 200))
    build = (await designer.get(`/api/pack-builds/${build.id}`)).body.build
  }
  await designer.post(`/api/pack-builds/${build.id}/publish`)
  const link = await designer.post(`/api/pack-builds/${build.id}/share-links`, {
    expiresAt: new Date(Date.now() + 7 * 864e5).toISOString(),
  })
  ids.share = link.body.link.token
  // An invitation waiting, and mail in the outbox.
  const admin = await signedIn(server.url, 'admin')
  await admin.post('/api/invitations', { email: 'new.listener@example.test', role: 'collaborator' })
  // Source devices of several kinds, each in its family's colour.
  for (const [name, kind] of [
    ['Bench laptop charger', 'power-supply'],
    ['Desk lamp dimmer', 'lighting'],
    ['Office monitor', 'display'],
    ['Fan motor', 'motor'],
  ]) {
    await admin.post('/api/sources', { name, kind })
  }
  browser = await launchBrowser()
}, 180_000)

afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

/** One browser context per person, size and theme: the theme is the one a person picked before (localStorage). */
async function contextFor(
  who: Who,
  size: (typeof SIZES)[number],
  theme: (typeof THEMES)[number],
): Promise<BrowserContext> {
  const context = await browser.newContext({ viewport: { width: size.width, height: size.height } })
  await context.addInitScript((t) => localStorage.setItem('strayfield.theme', t), theme)
  if (who !== 'nobody') {
    const page = await context.newPage()
    await signInThroughForm(page, server.url, `${who}@example.test`)
    await page.close()
  }
  return context
}

async function settle(page: Page) {
  await page.locator('h1').first().waitFor({ timeout: 15_000 })
  await page.waitForLoadState('networkidle', { timeout: 2_000 }).catch(() => undefined)
  await page.evaluate(() => document.fonts.ready)
}

/** axe-core's serious and critical findings, one line each, naming rule, help and where. */
async function axeFindings(page: Page): Promise<string[]> {
  const result = await new AxeBuilder({ page }).withTags(['wcag2a', 'wcag2aa', 'wcag21a', 'wcag21aa']).analyze()
  return result.violations
    .filter((v) => v.impact === 'serious' || v.impact === 'critical')
    .map(
      (v) =>
        `${v.impact} ${v.id}: ${v.help} — at ${v.nodes
          .slice(0, 4)
          .map((n) => n.target.join(' '))
          .join(' | ')}${v.nodes.length > 4 ? ` (+${v.nodes.length - 4} more)` : ''}`,
    )
}

/** The areas the role may see and sign out, reachable from the bar (opening the menu where it folds). */
async function checkNavigation(page: Page, who: Role, size: (typeof SIZES)[number], where: string) {
  const folded = size.width < FOLDS_BELOW
  if (folded) {
    const menu = page.getByRole('button', { name: 'Menu' })
    expect(
      (await menu.boundingBox())!.height,
      `${where}: the Menu button is at least 40 px tall`,
    ).toBeGreaterThanOrEqual(40)
    await menu.focus()
    await page.keyboard.press('Enter')
    await expect.poll(() => menu.getAttribute('aria-expanded'), { message: `${where}: the menu opens` }).toBe('true')
  }
  const nav = page.getByRole('navigation', { name: 'Areas' })
  for (const area of AREAS.filter((a) => can(who, a.permission))) {
    const link = nav.getByRole('link', { name: area.label, exact: true })
    expect(await link.isVisible(), `${where}: the area "${area.label}" is reachable`).toBe(true)
    const box = (await link.boundingBox())!
    expect(box.x + box.width, `${where}: "${area.label}" lies inside the viewport`).toBeLessThanOrEqual(size.width)
    if (folded) expect(box.height, `${where}: "${area.label}" is at least 40 px tall`).toBeGreaterThanOrEqual(40)
  }
  const hidden = AREAS.filter((a) => !can(who, a.permission)).map((a) => a.label)
  for (const label of hidden)
    expect(
      await nav.getByRole('link', { name: label, exact: true }).count(),
      `${where}: "${label}" is not offered`,
    ).toBe(0)
  if (!folded) await page.locator('[data-test=user-menu]').click()
  const signOut = page.getByRole('button', { name: 'Sign out' })
  expect(await signOut.isVisible(), `${where}: sign out is reachable`).toBe(true)
  const box = (await signOut.boundingBox())!
  expect(
    box.x + box.width <= size.width && box.y + box.height <= size.height,
    `${where}: sign out lies inside the viewport`,
  ).toBe(true)
  if (folded) expect(box.height, `${where}: sign out is at least 40 px tall`).toBeGreaterThanOrEqual(40)
  await page.keyboard.press('Escape')
}

for (const size of SIZES) {
  for (const theme of THEMES) {
    describe(`${size.name} ${size.width} × ${size.height}, ${theme} theme`, () => {
      const contexts = new Map<Who, BrowserContext>()
      afterAll(async () => {
        for (const c of contexts.values()) await c.close()
      })

      for (const view of VIEWS) {
        it(`${view.name}`, async () => {
          const where = `${view.name} at ${size.name} ${size.width} × ${size.height} in the ${theme} theme`
          if (!contexts.has(view.who)) contexts.set(view.who, await contextFor(view.who, size, theme))
          const page = await contexts.get(view.who)!.newPage()
          try {
            await page.goto(`${server.url}${view.path()}`)
            await settle(page)
            expect(
              await page.evaluate(() => document.documentElement.className),
              `${where}: the theme is applied`,
            ).toContain(theme)

            await screenshot(page, `look/${view.name.replace(/\W+/g, '-')}-${size.name}-${theme}`)
            const { scrollWidth, innerWidth } = await page.evaluate(() => ({
              scrollWidth: document.documentElement.scrollWidth,
              innerWidth: window.innerWidth,
            }))
            expect(
              scrollWidth,
              `${where}: the page is ${scrollWidth} px wide in a ${innerWidth} px viewport`,
            ).toBeLessThanOrEqual(innerWidth)

            const findings = await axeFindings(page)
            expect(findings, `${where}: axe-core found\n  ${findings.join('\n  ')}\n`).toEqual([])

            if (view.who !== 'nobody') await checkNavigation(page, view.who, size, where)
          } finally {
            await page.close()
          }
        })
      }

      it('signs out from the bar', async () => {
        const context = await contextFor('collaborator', size, theme)
        const page = await context.newPage()
        await page.goto(`${server.url}/library`)
        await settle(page)
        if (size.width < FOLDS_BELOW) await page.getByRole('button', { name: 'Menu' }).click()
        else await page.locator('[data-test=user-menu]').click()
        await screenshot(page, `look/menu-open-${size.name}-${theme}`)
        await page.getByRole('button', { name: 'Sign out' }).click()
        await page.waitForURL(/\/sign-in/)
        await expect.poll(() => page.getByRole('button', { name: 'Sign in' }).isVisible()).toBe(true)
        await context.close()
      })
    })
  }
}
