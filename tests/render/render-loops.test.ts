// Loops: both cut points on rising zero crossings of the mono sum, the whole
// rendered item is the loop, and a smpl chunk says so. Samples are decoded by
// ffmpeg and the smpl chunk is read byte by byte here (sampler chunk layout of
// the RIFF/MCI family of documents: loop count at byte 28, the first loop at 36
// with start at +8 and end at +12, end being the last frame played, inclusive).
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { probeWav, readMetadata } from '../../server/audio/wav-reader'
import { chunks, decode, ffprobe, mono, render, sox, tempDir } from './render-fixtures'

const dir = tempDir('render-loops')
const hum = path.join(dir, 'hum-stereo.wav')
const noise = path.join(dir, 'pink.wav')

beforeAll(() => {
  // Left 50 Hz, right 75 Hz with a third harmonic: channels that cross zero at different times.
  sox([
    '-n',
    '-r',
    '44100',
    '-b',
    '24',
    '-c',
    '2',
    hum,
    'synth',
    '3',
    'sine',
    '50',
    'sine',
    '75',
    'synth',
    'sine',
    'mix',
    '150',
    'vol',
    '-12dB',
  ])
  sox(['-n', '-r', '48000', '-b', '16', '-c', '1', noise, 'synth', '3', 'pinknoise', 'vol', '-20dB'])
})
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

/** Rising crossing of the mono sum between frames i−1 and i: a sign change or a zero. */
const rising = (m: Float32Array, i: number) => m[i - 1] < 0 && m[i] >= 0

const cases = [
  {
    name: 'stereo hum, 44.1 kHz 24-bit → 24-bit',
    file: hum,
    rate: 44100,
    channels: 2,
    bitDepth: 24 as const,
    start: 0.4031,
    end: 2.5517,
  },
  {
    name: 'pink noise, 48 kHz 16-bit → 16-bit',
    file: noise,
    rate: 48000,
    channels: 1,
    bitDepth: 16 as const,
    start: 0.5,
    end: 2.0,
  },
]

describe('loop cut points and the smpl chunk', () => {
  for (const c of cases) {
    it(c.name, async () => {
      const out = path.join(dir, `loop-${path.basename(c.file)}`)
      const r = await render(c.file, out, {
        kind: 'loop',
        start: c.start,
        end: c.end,
        settings: { bitDepth: c.bitDepth },
      })
      expect(r.loop?.onCrossings).toBe(true)
      expect(r.fadeInFrames + r.fadeOutFrames).toBe(0)

      // Moved by at most the 10 ms search window.
      expect(Math.abs(r.sourceStartFrame - Math.round(c.start * c.rate))).toBeLessThanOrEqual(0.01 * c.rate)
      expect(Math.abs(r.sourceEndFrame - Math.round(c.end * c.rate))).toBeLessThanOrEqual(0.01 * c.rate)

      // In the source (decoded by ffmpeg): rising crossings right at both cuts.
      const src = mono(decode(c.file, c.channels))
      expect(rising(src, r.sourceStartFrame)).toBe(true)
      expect(rising(src, r.sourceEndFrame)).toBe(true)

      // In the file: the wrap from the last frame back to the first is that same crossing.
      const y = mono(decode(out, c.channels))
      const frames = Number(ffprobe(out).stream.duration_ts)
      expect(y.length).toBe(frames)
      expect(frames).toBe(r.sourceEndFrame - r.sourceStartFrame)
      expect(y[frames - 1]).toBeLessThanOrEqual(0)
      expect(y[0]).toBeGreaterThanOrEqual(0)

      // smpl, read from the bytes: one loop spanning the whole file, end inclusive.
      const smpl = chunks(out).get('smpl')!
      expect(smpl.readUInt32LE(28)).toBe(1)
      expect(smpl.readUInt32LE(36 + 8)).toBe(0)
      expect(smpl.readUInt32LE(36 + 12)).toBe(frames - 1)
      expect(smpl.readUInt32LE(8)).toBe(Math.round(1e9 / c.rate)) // sample period in ns
      // Our reader agrees.
      const meta = await readMetadata(out, await probeWav(out))
      expect(meta.loops).toEqual([{ start: 0, end: frames - 1, type: 0 }])
    })
  }

  it('one-shots carry no smpl chunk', async () => {
    const out = path.join(dir, 'oneshot.wav')
    await render(noise, out, { start: 0.5, end: 1.5 })
    expect(chunks(out).has('smpl')).toBe(false)
  })
})
