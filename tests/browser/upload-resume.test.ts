// A recordist's upload cut off by a page reload goes on where it stopped when the same file is
// dropped again (tus 1.0.0 resumption: tus-js-client's fingerprint in localStorage, HEAD for the
// kept offset). Debian's Chromium with its upload throttled through the DevTools protocol, so
// the reload lands mid-upload.
import crypto from 'node:crypto'
import fs from 'node:fs'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { screenshot, signInThroughForm, useBrowserServer } from '../helpers/browser'
import { createSession, soxWav } from '../helpers/uploads'
import { signedIn } from '../helpers/server'

const env = useBrowserServer()

describe('resumable upload in the browser', () => {
  it.each([
    { size: 'desktop', viewport: { width: 1440, height: 900 }, seconds: 30 },
    { size: 'phone', viewport: { width: 390, height: 844 }, seconds: 29 },
  ])('$size: resumes after a reload mid-upload from the kept bytes, one take of the same SHA-256', async (c) => {
    const rec = await signedIn(env.server.url, 'recordist')
    const sessionId = (await createSession(rec)).id
    // 30 s of 48 kHz 24-bit stereo noise, about 8.6 MB: some 9 s at 1 MB/s.
    const file = soxWav(path.join(env.server.dir, c.size, 'REC0042.WAV'), {
      rate: 48000,
      bits: 24,
      channels: 2,
      seconds: c.seconds,
      synth: ['whitenoise'],
    })
    const bytes = fs.readFileSync(file)

    const page = await env.browser.newPage({ viewport: c.viewport })
    const offsets: number[] = []
    page.on('request', (r) => {
      if (r.method() === 'PATCH' && r.url().includes('/api/files/')) offsets.push(Number(r.headers()['upload-offset']))
    })
    await signInThroughForm(page, env.server.url, 'recordist@example.test')
    await page.goto(`${env.server.url}/captures/${sessionId}`)
    const cdp = await page.context().newCDPSession(page)
    await cdp.send('Network.enable')
    await cdp.send('Network.emulateNetworkConditions', {
      offline: false,
      latency: 0,
      downloadThroughput: -1,
      uploadThroughput: 1_000_000,
    })

    await page.locator('[data-test=file-input]').setInputFiles(file)
    const bar = page.locator('[data-test=upload-queue] li .el-progress__text')
    await expect.poll(async () => parseInt(await bar.innerText(), 10), { timeout: 30_000 }).toBeGreaterThanOrEqual(20)
    await screenshot(page, `upload-resume-${c.size}-before-reload`)
    await page.reload()

    // No take yet: the upload is unfinished, not refused.
    expect((await rec.get(`/api/takes?sessionId=${sessionId}`).expect(200)).body.total).toBe(0)
    await cdp.send('Network.emulateNetworkConditions', {
      offline: false,
      latency: 0,
      downloadThroughput: -1,
      uploadThroughput: -1,
    })
    offsets.length = 0
    await page.locator('[data-test=file-input]').setInputFiles(file)
    await expect
      .poll(() => page.locator('[data-test=upload-queue] li[data-state=done]').count(), { timeout: 60_000 })
      .toBe(1)
    // The first PATCH after the reload started from a kept offset, not from 0.
    expect(offsets[0]).toBeGreaterThan(0)
    expect(offsets[0]).toBeLessThan(bytes.length)
    await expect.poll(() => page.locator('[data-test=log-sheet] [data-test=log-row]').count()).toBe(1)
    await screenshot(page, `upload-resume-${c.size}-done`)

    const rows = await env.server.ctx.db
      .selectFrom('takes')
      .select(['sha256', 'size_bytes'])
      .where('session_id', '=', sessionId)
      .execute()
    expect(rows).toEqual([
      { sha256: crypto.createHash('sha256').update(bytes).digest('hex'), size_bytes: bytes.length },
    ])
    await page.close()
  })
})
