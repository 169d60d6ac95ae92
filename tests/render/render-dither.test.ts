// Word length: 16/24-bit PCM renders get TPDF dither when samples leave the
// output grid, 32-bit renders are IEEE float, and an unchanged PCM source is
// copied bit for bit. Samples are decoded by ffmpeg. Theory (common practice,
// the standard analysis of subtractive-free dither): rounding alone leaves
// an error of variance 1/12 LSB²; triangular dither of ±1 LSB adds 1/6 LSB²,
// so a dithered requantisation has error variance 1/4 LSB² (RMS 0.5 LSB), zero
// mean, and never more than 1.5 LSB of error.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { decode, ffprobe, render, sox, tempDir } from './render-fixtures'

const dir = tempDir('render-dither')
const deep = path.join(dir, 'sine-24.wav')
const sixteen = path.join(dir, 'noise-16.wav')

beforeAll(() => {
  sox(['-n', '-r', '48000', '-b', '24', '-c', '1', deep, 'synth', '2', 'sine', '997', 'vol', '-40dB'])
  sox(['-n', '-r', '44100', '-b', '16', '-c', '2', sixteen, 'synth', '2', 'whitenoise', 'vol', '-20dB'])
})
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

const settings = { normalize: 'none' as const, fadeInMs: 0, fadeOutMs: 0 }

describe('dither and bit depth', () => {
  it('24-bit → 16-bit adds TPDF dither: error of zero mean and 1/4 LSB² variance, at most 1.5 LSB', async () => {
    const out = path.join(dir, 'to16.wav')
    const r = await render(deep, out, { settings: { ...settings, bitDepth: 16 } })
    expect(r.dithered).toBe(true)
    expect(r.gainDb).toBe(0)
    expect(ffprobe(out).stream.codec_name).toBe('pcm_s16le')
    const [x] = decode(deep, 1)
    const [y] = decode(out, 1)
    let sum = 0
    let sq = 0
    let worst = 0
    let cross = 0
    let xx = 0
    let offGrid = 0
    for (let i = 0; i < x.length; i++) {
      const e = (y[i] - x[i]) * 32768
      sum += e
      sq += e * e
      worst = Math.max(worst, Math.abs(e))
      cross += e * x[i]
      xx += x[i] * x[i]
      if (!Number.isInteger(y[i] * 32768)) offGrid++
    }
    // Every output sample lies on the 16-bit grid.
    expect(offGrid).toBe(0)
    const mean = sum / x.length
    const variance = sq / x.length - mean * mean
    expect(Math.abs(mean)).toBeLessThan(0.02)
    expect(variance).toBeGreaterThan(0.22)
    expect(variance).toBeLessThan(0.28)
    expect(worst).toBeLessThanOrEqual(1.5)
    // The error does not follow the signal (normalised correlation near zero).
    expect(Math.abs(cross / Math.sqrt(sq * xx))).toBeLessThan(0.02)
  })

  it('copies a 16-bit source rendered to 16 bits at 0 dB without fades bit for bit (no dither needed)', async () => {
    const out = path.join(dir, 'copy16.wav')
    const r = await render(sixteen, out, { settings: { ...settings, bitDepth: 16 } })
    expect(r.dithered).toBe(false)
    const a = decode(sixteen, 2)
    const b = decode(out, 2)
    for (let c = 0; c < 2; c++) expect(Buffer.from(b[c].buffer).equals(Buffer.from(a[c].buffer))).toBe(true)
  })

  it('renders 32 as IEEE float (ffprobe pcm_f32le) with no dither', async () => {
    const out = path.join(dir, 'float.wav')
    const r = await render(deep, out, { settings: { bitDepth: 32 } })
    expect(r.dithered).toBe(false)
    expect(r.encoding).toBe('float')
    expect(ffprobe(out).stream.codec_name).toBe('pcm_f32le')
  })

  it('24-bit output of a 16-bit source with gain is dithered at 24 bits and lies on the 24-bit grid', async () => {
    const out = path.join(dir, 'to24.wav')
    const r = await render(sixteen, out, { settings: { bitDepth: 24 } })
    expect(r.dithered).toBe(true)
    const [y] = decode(out, 2)
    expect(y.filter((v) => !Number.isInteger(v * 8388608)).length).toBe(0)
    expect(ffprobe(out).stream.codec_name).toBe('pcm_s24le')
  })
})
