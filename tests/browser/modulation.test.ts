// The bench's modulation panel in Debian's Chromium: a designer picks the tone
// curve of a rising glide (made by Debian's sox), sees it rise in the preview,
// reads the caution, and exports it as MIDI; the download is read back with
// Debian's python3-mido.
import { execFileSync } from 'node:child_process'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import type { Browser } from 'playwright-core'
import { signedIn, startTestServer, type TestServer } from '../helpers/server'
import { launchBrowser, screenshot, signInThroughForm } from '../helpers/browser'
import { createSession, soxWav, uploadTake, waitForTake } from '../helpers/uploads'

let server: TestServer
let browser: Browser
let takeId: number

beforeAll(async () => {
  server = await startTestServer({ clientDir: path.resolve('dist') })
  browser = await launchBrowser()
  const rec = await signedIn(server.url, 'recordist')
  const s = await createSession(rec, { title: 'Modulation bench capture' })
  // sox: a 3 s sine sweep from 200 Hz to 1.6 kHz.
  const file = soxWav(path.join(server.dir, 'files', 'glide.wav'), {
    rate: 16000,
    bits: 16,
    seconds: 3,
    synth: ['sine', '200-1600'],
  })
  takeId = (await uploadTake(rec, s.id, file, 'rising_glide.wav')).body.take.id
  await waitForTake(rec, takeId, 120_000)
})

afterAll(async () => {
  await browser?.close()
  await server?.stop()
})

/** First and last y of an SVG path of M/L commands (0 is the top). */
function ends(d: string): [number, number] {
  const ys = [...d.matchAll(/[ML][\d.]+,([\d.]+)/gu)].map((m) => Number(m[1]))
  return [ys[0], ys[ys.length - 1]]
}

describe('modulation panel on the listening bench', () => {
  it('previews the tone curve of a glide rising and exports it as a MIDI controller curve', async () => {
    const page = await browser.newPage({ viewport: { width: 1440, height: 900 }, acceptDownloads: true })
    await signInThroughForm(page, server.url, 'designer@example.test')
    await page.goto(`${server.url}/takes/${takeId}`)
    const panel = page.locator('[data-test=modulation-panel]')
    await panel.waitFor()
    await expect(panel.getByText('must be DC-coupled to reach modular inputs').isVisible()).resolves.toBe(true)

    await panel.getByRole('radio', { name: /Tone/ }).check()
    const curve = panel.locator('[data-test=modulation-preview] path')
    // The preview follows the last change after 400 ms: wait until the line drawn is the tone's, which climbs (the envelope's is flat).
    await page.waitForFunction(
      () => {
        const ys = [
          ...(document.querySelector('[data-test=modulation-preview] path')?.getAttribute('d') ?? '').matchAll(
            /[ML][\d.]+,([\d.]+)/gu,
          ),
        ].map((m) => Number(m[1]))
        return ys.length > 1 && ys[0] - ys[ys.length - 1] > 10
      },
      undefined,
      { timeout: 20_000 },
    )
    const [first, last] = ends((await curve.getAttribute('d')) ?? '')
    // 200 Hz → 1.6 kHz is 3 of the 10 octaves above 20 Hz: the line climbs by about 30 % of the strip's height.
    expect(first - last).toBeGreaterThan(25)
    expect(first - last).toBeLessThan(35)
    await screenshot(page, 'bench-modulation-tone')

    await panel.getByLabel('File').selectOption('midi')
    const [download] = await Promise.all([
      page.waitForEvent('download'),
      panel.getByRole('button', { name: 'Export' }).click(),
    ])
    expect(download.suggestedFilename()).toBe('rising_glide_tone.mid')
    const saved = path.join(server.dir, 'files', 'exported.mid')
    await download.saveAs(saved)
    // Debian's python3-mido: 3 s at the default 1000 points a second on controller 1.
    const out = execFileSync(
      '/usr/bin/python3',
      [
        '-c',
        'import sys, mido; m = [x for x in mido.MidiFile(sys.argv[1]) if x.type == "control_change"]; print(len(m), m[0].control, m[0].value, m[-1].value)',
        saved,
      ],
      { encoding: 'utf8' },
    )
    const [count, control, firstValue, lastValue] = out.trim().split(' ').map(Number)
    expect(count).toBe(3000)
    expect(control).toBe(1)
    expect(lastValue - firstValue).toBeGreaterThan(30) // 3 octaves of 10 on 0…127: about 38 steps
    await page.close()
  })

  it('fits a phone screen with the caution in view of the export button', async () => {
    const page = await browser.newPage({ viewport: { width: 390, height: 844 } })
    await signInThroughForm(page, server.url, 'designer@example.test')
    await page.goto(`${server.url}/takes/${takeId}`)
    const panel = page.locator('[data-test=modulation-panel]')
    await panel.waitFor()
    await panel.scrollIntoViewIfNeeded()
    const box = (await panel.boundingBox())!
    expect(box.x).toBeGreaterThanOrEqual(0)
    expect(box.x + box.width).toBeLessThanOrEqual(390)
    expect(await panel.evaluate((el) => el.scrollWidth <= el.clientWidth)).toBe(true)
    await expect(panel.getByRole('button', { name: 'Export' }).isVisible()).resolves.toBe(true)
    await expect(panel.getByText('must be DC-coupled').isVisible()).resolves.toBe(true)
    await screenshot(page, 'bench-modulation-phone')
    await page.close()
  })
})
