// A refused upload ends at once with the server's words. The same WAV dropped twice on a capture
// session: the second is a duplicate (same SHA-256), which the tus upload learns on its last PATCH
// (409 in the one error shape). tus-js-client's default would try a 409 again and, finding the
// refused upload removed, start a new one and send the whole file again, for about a minute.
// Debian's Chromium; requests counted with playwright's page.on('request').
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'
import { createSession, soxWav } from '../helpers/uploads'
import { signedIn } from '../helpers/server'

const env = useBrowserServer()

describe('a refused upload in the browser', () => {
  it.each([
    { size: 'desktop', viewport: { width: 1440, height: 900 }, hz: '50' },
    { size: 'phone', viewport: { width: 390, height: 844 }, hz: '60' },
  ])('$size: a duplicate is refused at once, naming the take, with one PATCH of its bytes', async (c) => {
    const rec = await signedIn(env.server.url, 'recordist')
    const sessionId = (await createSession(rec)).id
    const file = soxWav(path.join(env.server.dir, c.size, 'HUM0007.WAV'), {
      rate: 48000,
      bits: 24,
      channels: 1,
      seconds: 2,
      // Each size its own hum: the library refuses the same bytes in any session.
      synth: ['sine', c.hz],
    })

    const page = await env.browser.newPage({ viewport: c.viewport })
    const sent: string[] = []
    page.on('request', (r) => {
      if (r.url().includes('/api/files')) sent.push(r.method())
    })
    await signInThroughForm(page, env.server.url, 'recordist@example.test')
    await page.goto(`${env.server.url}/captures/${sessionId}`)
    const input = page.locator('[data-test=file-input]')
    const rows = page.locator('[data-test=upload-queue] li')

    await input.setInputFiles(file)
    await expect.poll(() => rows.nth(0).getAttribute('data-state'), { timeout: 20_000 }).toBe('done')
    const first = await env.server.ctx.db
      .selectFrom('takes')
      .select('id')
      .where('session_id', '=', sessionId)
      .executeTakeFirstOrThrow()
    sent.length = 0

    await input.setInputFiles(file)
    // A few seconds of polling: the refusal comes with the answer to the one PATCH, not after retries.
    await expect.poll(() => rows.nth(1).getAttribute('data-state'), { timeout: 5000 }).toBe('failed')
    await expect.poll(() => rows.nth(1).locator('.error').innerText()).toContain(`same content as take ${first.id}`)
    await screenshot(page, `upload-refusal-${c.size}`)
    // Nothing goes out after the refusal: no retry, no HEAD for the removed upload, no second POST.
    await page.waitForTimeout(1500)
    expect(sent).toEqual(['POST', 'PATCH'])
    expect(
      (await env.server.ctx.db.selectFrom('takes').select('id').where('session_id', '=', sessionId).execute()).length,
    ).toBe(1)
    await page.close()
  })
})
