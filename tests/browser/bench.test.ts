// The listening bench in Debian's Chromium, used the way a designer uses it:
// drag a selection across the field strip, adjust it by a handle, press R,
// type a name and Enter; zoom with + and see the ruler and the spectrogram on
// the same range, nudge with the arrows and mark with [ and ]; drag a box on the spectrogram and write a listening note with
// Ctrl+Enter, give it an outcome, and find the take by that outcome in the
// library. Screenshots at phone, tablet and desktop sizes.
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser, BrowserContext, Page } from 'playwright-core'
import { parseRulerTime } from '../../src/components/bench/strip-math'
import { signedIn, startTestServer, type Client, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
let context: BrowserContext
let page: Page
let whineId: number
let humId: number
const DURATION = 20

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  const rec: Client = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Bench strip capture' })
  const dir = path.join(server.dir, 'files')
  // A steady 9 kHz whine (sox sine), 20 s at 48 kHz, and a short 50 Hz hum.
  const whine = soxWav(path.join(dir, 'whine.wav'), { seconds: DURATION, synth: ['sine', '9000'] })
  whineId = (await uploadTake(rec, s.id, whine, 'router_whine.wav')).body.take.id
  const hum = soxWav(path.join(dir, 'hum.wav'), { seconds: 3, synth: ['sine', '50'] })
  humId = (await uploadTake(rec, s.id, hum, 'mains_hum.wav')).body.take.id
  for (const id of [whineId, humId]) await waitForTake(rec, id, 120_000)
  browser = await launchBrowser()
  context = await browser.newContext({ viewport: { width: 1440, height: 900 } })
  page = await context.newPage()
  await signInThroughForm(page, server.url, 'designer@example.test')
})
afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

/** "0:04.0" → 4; the player's "0:08.5 / 0:20.0" → 8.5. */
const secondsOf = (text: string) => parseRulerTime(text.split('/')[0].trim())
const box = async (sel: string) => (await page.locator(sel).first().boundingBox())!

/**
 * The playhead where the strip's media element has landed: no seek running and data to play from there.
 * Read only then, as a person looks once the line stops: a lost seek shows as the position it fell back to.
 */
async function landedPlayhead() {
  const settled = () =>
    page.evaluate(() => {
      const m = document.querySelector<HTMLAudioElement>('[data-test=field-strip] audio')!
      return !m.seeking && m.readyState >= HTMLMediaElement.HAVE_FUTURE_DATA
    })
  await expect.poll(settled, { timeout: 15_000 }).toBe(true)
  return secondsOf(await page.locator('[data-test=playhead]').innerText())
}

/**
 * Chromium's CPU throttling (DevTools' slowdown; common practice for a slower computer): a seek then
 * outlasts the gap between quick presses, so they arrive while the media element is still seeking.
 */
async function onASlowerComputer(run: () => Promise<void>) {
  const cdp = await context.newCDPSession(page)
  await cdp.send('Emulation.setCPUThrottlingRate', { rate: 6 })
  try {
    await run()
  } finally {
    await cdp.send('Emulation.setCPUThrottlingRate', { rate: 1 })
    await cdp.detach()
  }
}
/** Quick presses of one key, one after the other without waiting for anything between them. */
async function press(key: string, times: number) {
  for (let i = 0; i < times; i++) await page.keyboard.press(key)
}

async function openBench() {
  await page.goto(`${server.url}/takes/${whineId}`)
  await page.locator('[data-test=waveform] canvas').first().waitFor({ timeout: 20_000 })
  await page.locator('img[data-test=spectrogram]').waitFor({ timeout: 20_000 })
}

describe('field strip', () => {
  it('drag selects, a handle adjusts, R and a typed name save a region that shows in the region lane', async () => {
    await openBench()
    const w = await box('[data-test=waveform]')
    const y = w.y + w.height / 2
    await page.mouse.move(w.x + w.width * 0.2, y)
    await page.mouse.down()
    await page.mouse.move(w.x + w.width * 0.35, y, { steps: 5 })
    await page.mouse.move(w.x + w.width * 0.5, y, { steps: 5 })
    await page.mouse.up()
    const start = secondsOf(await page.locator('[data-test=selection-start]').innerText())
    const end = secondsOf(await page.locator('[data-test=selection-end]').innerText())
    expect(start).toBeCloseTo(DURATION * 0.2, 0)
    expect(end).toBeCloseTo(DURATION * 0.5, 0)
    expect(await page.locator('[data-test=selection-start]').innerText()).toMatch(/^\d+:\d\d\.\d$/)

    // The end handle, dragged from 50 % to 60 % of the strip.
    const handle = await box('[data-test=waveform] .handle.end')
    await page.mouse.move(handle.x + handle.width / 2, handle.y + 8)
    await page.mouse.down()
    await page.mouse.move(w.x + w.width * 0.6, handle.y + 8, { steps: 6 })
    await page.mouse.up()
    expect(secondsOf(await page.locator('[data-test=selection-end]').innerText())).toBeCloseTo(DURATION * 0.6, 0)
    expect(secondsOf(await page.locator('[data-test=selection-start]').innerText())).toBeCloseTo(start, 1)

    // From the keyboard: the focused end handle moves by a fiftieth of the visible span.
    const endBefore = secondsOf(await page.locator('[data-test=selection-end]').innerText())
    await page.getByRole('slider', { name: 'Selection end' }).focus()
    await page.keyboard.press('ArrowLeft')
    await page.keyboard.press('ArrowRight')
    await page.keyboard.press('ArrowRight')
    expect(secondsOf(await page.locator('[data-test=selection-end]').innerText())).toBeCloseTo(
      endBefore + DURATION / 50,
      1,
    )
    await page.keyboard.press('ArrowLeft')

    await page.keyboard.press('r')
    const name = page.getByLabel('Region name')
    await expect.poll(() => name.evaluate((el) => el === document.activeElement)).toBe(true)
    await page.keyboard.type('Clean whine')
    await page.keyboard.press('Enter')
    const lane = page.locator('[data-test=region-lane]')
    await expect.poll(() => lane.innerText()).toContain('Clean whine')
    // The name field closes once the save has also reloaded the take's history (a second request).
    await expect.poll(() => name.count()).toBe(0)
    // Its name sits in the lane under the strip, from 20 % of the strip on.
    const label = await lane.getByRole('button', { name: /Clean whine/ }).boundingBox()
    expect(Math.abs(label!.x - (w.x + w.width * 0.2))).toBeLessThan(w.width * 0.02)
    expect(label!.y).toBeGreaterThan(w.y + w.height)
  })

  it('a click seeks; + zooms with the ruler and the spectrogram on the same range; arrows nudge a tenth of it', async () => {
    // Its own page load, so it runs alone too (vitest -t nudge).
    await openBench()
    const asked: { start: number; end: number }[] = []
    page.on('request', (r) => {
      const u = new URL(r.url())
      if (u.pathname === `/api/takes/${whineId}/spectrogram.png` && u.searchParams.has('start')) {
        asked.push({ start: Number(u.searchParams.get('start')), end: Number(u.searchParams.get('end')) })
      }
    })
    const w = await box('[data-test=waveform]')
    await page.mouse.click(w.x + w.width * 0.4, w.y + w.height / 2)
    await expect
      .poll(async () => secondsOf(await page.locator('[data-test=playhead]').innerText()))
      .toBeCloseTo(DURATION * 0.4, 0)

    await page.keyboard.press('+')
    await page.keyboard.press('+')
    const ruler = page.locator('[data-test=ruler]')
    const range = async () => ({
      start: Number(await ruler.getAttribute('data-start')),
      end: Number(await ruler.getAttribute('data-end')),
    })
    await expect
      .poll(async () => {
        const r = await range()
        return r.end - r.start
      })
      .toBeCloseTo(DURATION / 4, 1)
    const view = await range()
    // The playhead (8 s) stays where it was on the screen: the zoom is anchored on it.
    expect(view.start).toBeLessThan(8)
    expect(view.end).toBeGreaterThan(8)

    // The spectrogram was requested for the visible range (to 10 ms, outward).
    await expect
      .poll(() => asked.some((a) => Math.abs(a.start - view.start) <= 0.011 && Math.abs(a.end - view.end) <= 0.011), {
        timeout: 15_000,
      })
      .toBe(true)
    const img = page.locator('img[data-test=spectrogram]')
    await expect
      .poll(async () => Number(await img.getAttribute('data-end')) - Number(await img.getAttribute('data-start')), {
        timeout: 15_000,
      })
      .toBeLessThan(DURATION / 4 + 0.05)
    const rendered = {
      start: Number(await img.getAttribute('data-start')),
      end: Number(await img.getAttribute('data-end')),
    }
    const labels = await page.locator('[data-test=ruler-label]').allInnerTexts()
    expect(labels.length).toBeGreaterThan(2)
    for (const l of labels) {
      expect(parseRulerTime(l)).toBeGreaterThanOrEqual(rendered.start - 0.011)
      expect(parseRulerTime(l)).toBeLessThanOrEqual(rendered.end + 0.011)
    }
    // The image spans the plot: its ends line up with the ruler's range.
    const plot = await box('.plot.spec')
    const picture = (await img.boundingBox())!
    const pxPerSecond = plot.width / (view.end - view.start)
    expect(Math.abs(picture.x - (plot.x + (rendered.start - view.start) * pxPerSecond))).toBeLessThan(2)
    expect(Math.abs(picture.x + picture.width - (plot.x + (rendered.end - view.start) * pxPerSecond))).toBeLessThan(2)

    const axis = await page.locator('[data-test=spectrogram-axis]').innerText()
    expect(axis).toMatch(/\d+ Hz/)
    expect(axis).toMatch(/\d+ kHz/)
    expect(await page.locator('[data-test=spectrogram-legend]').innerText()).toContain('dBFS')

    const before = secondsOf(await page.locator('[data-test=playhead]').innerText())
    await page.keyboard.press('ArrowRight')
    await expect
      .poll(async () => secondsOf(await page.locator('[data-test=playhead]').innerText()))
      .toBeCloseTo(before + (view.end - view.start) / 10, 1)

    // [ and ] set the selection's ends at the playhead.
    const at = secondsOf(await page.locator('[data-test=playhead]').innerText())
    await page.keyboard.press('[')
    await onASlowerComputer(async () => {
      await press('ArrowRight', 3)
      // A seek lands when the media element says so: wait for the playhead to get there, as a person would look.
      await expect.poll(landedPlayhead).toBeCloseTo(at + (3 * (view.end - view.start)) / 10, 1)
      await page.keyboard.press(']')
    })
    expect(secondsOf(await page.locator('[data-test=selection-start]').innerText())).toBeCloseTo(at, 1)
    expect(secondsOf(await page.locator('[data-test=selection-end]').innerText())).toBeCloseTo(
      at + (3 * (view.end - view.start)) / 10,
      1,
    )

    await page.getByRole('button', { name: 'Taller waveform (vertical zoom in)' }).click()
    await expect.poll(() => page.locator('.amp-top').innerText()).toBe('\u22126 dBFS')
    await screenshot(page, 'bench-zoomed-1440')
  })
})

describe('quick arrow nudges', () => {
  const ruler = () => page.locator('[data-test=ruler]')
  const range = async () => ({
    start: Number(await ruler().getAttribute('data-start')),
    end: Number(await ruler().getAttribute('data-end')),
  })
  const clickAt = async (fraction: number) => {
    const w = await box('[data-test=waveform]')
    await page.mouse.click(w.x + w.width * fraction, w.y + w.height / 2)
  }

  it("every press counts, both ways and past the edges of a zoomed view, and the playhead stops at the take's ends", async () => {
    await openBench()
    await expect.poll(async () => (await range()).end - (await range()).start).toBeCloseTo(DURATION, 1)
    // The whole take in view: a press is a tenth of it, 2 s.
    await clickAt(0.95)
    await expect.poll(landedPlayhead).toBeCloseTo(DURATION * 0.95, 0)
    await onASlowerComputer(async () => {
      await press('ArrowRight', 3)
      await expect.poll(landedPlayhead).toBeCloseTo(DURATION, 1)
      await press('ArrowLeft', 3)
      await expect.poll(landedPlayhead).toBeCloseTo(DURATION - 3 * 2, 1)
    })

    // Zoomed in twice around 1 s: a 5 s view, a press is 0.5 s.
    await clickAt(0.05)
    await expect.poll(landedPlayhead).toBeCloseTo(DURATION * 0.05, 0)
    await press('+', 2)
    await expect.poll(async () => (await range()).end - (await range()).start).toBeCloseTo(DURATION / 4, 1)
    const span = (await range()).end - (await range()).start
    let first = await range()
    await onASlowerComputer(async () => {
      await press('ArrowLeft', 3)
      await expect.poll(landedPlayhead).toBe(0)
      first = await range()
      // Thirteen steps right carry the playhead past the view's right edge; the view follows it.
      await press('ArrowRight', 13)
      await expect.poll(landedPlayhead).toBeCloseTo((13 * span) / 10, 1)
    })
    const head = await landedPlayhead()
    await expect.poll(async () => (await range()).start).toBeLessThanOrEqual(head + 0.01)
    await expect.poll(async () => (await range()).end).toBeGreaterThanOrEqual(head)
    // It left the place it had: the playhead went past its right edge.
    expect(head).toBeGreaterThan(first.end)
    expect((await range()).start).toBeGreaterThan(first.start)
    await screenshot(page, 'bench-nudged-1440')
  })
})

describe('listening notes', () => {
  it('pins a note to a time and a band drawn on the spectrogram, gives it an outcome, and the library finds the take by it', async () => {
    await openBench()
    const spec = await box('.plot.spec')
    await page.mouse.move(spec.x + spec.width * 0.3, spec.y + spec.height * 0.2)
    await page.mouse.down()
    await page.mouse.move(spec.x + spec.width * 0.36, spec.y + spec.height * 0.26, { steps: 4 })
    await page.mouse.move(spec.x + spec.width * 0.4, spec.y + spec.height * 0.3, { steps: 4 })
    await page.mouse.up()
    const pin = page.locator('[data-test=note-pin]')
    await expect.poll(() => pin.innerText()).toMatch(/kHz/)
    expect(secondsOf((await pin.innerText()).split(',')[0])).toBeCloseTo(DURATION * 0.3, 0)

    await page.getByLabel('Listening note', { exact: true }).click()
    await page.keyboard.type('The 9 kHz whine is steady from here')
    await page.keyboard.press('Control+Enter')
    const note = page.locator('[data-test=note]', { hasText: 'The 9 kHz whine is steady from here' })
    await note.waitFor()
    expect(await note.locator('[data-test=note-band]').innerText()).toMatch(/kHz–.*kHz/)
    expect(await note.innerText()).toContain('DH')
    await expect.poll(() => page.locator('[data-test=note-mark]').count()).toBe(1)
    expect(await page.locator('[data-test=note-mark]').innerText()).toBe('DH')
    expect(await page.getByLabel('Listening note', { exact: true }).inputValue()).toBe('')

    const keep = note.getByRole('button', { name: 'keep' })
    await keep.click()
    await expect.poll(() => keep.getAttribute('aria-pressed')).toBe('true')
    expect(await page.getByText(/Resolve|Reopen/).count()).toBe(0)

    await page.goto(`${server.url}/library`)
    const rows = () =>
      page
        .locator('[data-test=library-table] [data-take]')
        .evaluateAll((els) => els.map((e) => Number(e.getAttribute('data-take'))))
    await expect.poll(async () => (await rows()).sort()).toEqual([whineId, humId].sort())
    await page.getByLabel('Listening note outcome').selectOption('keep')
    await expect.poll(rows).toEqual([whineId])
    expect(new URL(page.url()).searchParams.get('noteOutcome')).toBe('keep')
    await page.getByLabel('Listening note outcome').selectOption('reject')
    await expect.poll(rows).toEqual([])
  })
})

describe('details', () => {
  it('tags typed as chips with Enter (the shared tag input) are saved on the take', async () => {
    await openBench()
    await page.locator('[data-test=edit-take]').click()
    await page.getByLabel('Tags of this take', { exact: true }).click()
    for (const tag of ['whine', 'Router']) {
      await page.keyboard.type(tag)
      await page.keyboard.press('Enter')
    }
    await expect.poll(() => page.locator('[data-test=take-details] [data-test=tag-chip]').count()).toBe(2)
    await page.getByRole('button', { name: 'Save', exact: true }).click()
    await expect
      .poll(() => page.locator('[data-test=take-details] .chip.tag').allInnerTexts())
      .toEqual(['router', 'whine'])
  })
})

describe('sizes', () => {
  for (const [w, h] of [
    [390, 844],
    [768, 1024],
    [1440, 900],
  ] as const) {
    it(`at ${w} × ${h} the strip fits, sits above the measurement card when narrow, and touch targets are at least 40 px`, async () => {
      const touch = w < 1000
      const ctx = await browser.newContext({ viewport: { width: w, height: h }, hasTouch: touch })
      const p = await ctx.newPage()
      await signInThroughForm(p, server.url, 'designer@example.test')
      await p.goto(`${server.url}/takes/${whineId}`)
      await p.locator('[data-test=waveform] canvas').first().waitFor({ timeout: 20_000 })
      await p.locator('img[data-test=spectrogram]').waitFor({ timeout: 20_000 })
      await screenshot(p, `bench-${w}x${h}`)
      // Whatever of the bench reaches past the right edge, named, so a failure says where.
      // (The navigation bar's own layout is checked by the look harness.)
      const wide = await p.evaluate(
        (vw) =>
          [...document.querySelectorAll('.bench *')]
            .filter((e) => e.getBoundingClientRect().right > vw + 0.5)
            .slice(0, 5)
            .map((e) => `${e.tagName.toLowerCase()}.${[...e.classList].join('.')}`),
        w,
      )
      expect(wide).toEqual([])
      const strip = (await p.locator('[data-test=field-strip]').boundingBox())!
      const card = (await p.locator('[data-test=measurement-card]').boundingBox())!
      const wave = (await p.locator('[data-test=waveform]').boundingBox())!
      expect(wave.height).toBeGreaterThanOrEqual(100)
      if (w < 1000) {
        expect(card.y).toBeGreaterThanOrEqual(strip.y + strip.height)
        expect(strip.width).toBeGreaterThan(w * 0.85)
        for (const name of ['Taller waveform (vertical zoom in)', 'keep']) {
          const b = (await p.getByRole('button', { name, exact: true }).first().boundingBox())!
          expect(b.height, name).toBeGreaterThanOrEqual(40)
        }
      } else {
        expect(card.x).toBeGreaterThanOrEqual(strip.x + strip.width)
      }
      await screenshot(p, `bench-${w}x${h}`)
      await ctx.close()
    })
  }
})
