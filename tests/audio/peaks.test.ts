// Waveform overview. Reference samples come from ffmpeg's own decode of the
// file (-f f32le), so the pyramid is checked against an outside reader; the
// result shape is the shared Peaks schema (the wavesurfer.js `peaks` form).
import { execFileSync } from 'node:child_process'
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { Peaks } from '@shared/schemas/analysis'
import { analyzeFile } from '../../server/audio/analyze'
import { Meter } from '../../server/audio/meter'
import { PeaksBuilder, readAllPeakLevels, readPeaks } from '../../server/audio/peaks'
import { ffmpeg, sox } from '../helpers/reference-tools'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-peaks-'))
const audio = join(dir, 'take.wav')
const peaksFile = join(dir, 'take.peaks')
const QUANTUM = 1 / 32767
let planar: Float32Array[] = []

/** ffmpeg's decode as planar Float32 channels. */
function ffmpegPlanar(path: string, channels: number): Float32Array[] {
  const raw = execFileSync('ffmpeg', ['-v', 'error', '-i', path, '-f', 'f32le', '-acodec', 'pcm_f32le', '-'], {
    maxBuffer: 1 << 30,
  })
  const all = new Float32Array(raw.buffer.slice(raw.byteOffset, raw.byteOffset + raw.byteLength))
  const frames = all.length / channels
  return Array.from({ length: channels }, (_, c) =>
    Float32Array.from({ length: frames }, (_, i) => all[i * channels + c]),
  )
}

beforeAll(async () => {
  // 8 kHz keeps the file small while 600 s and a few odd frames still give three levels and a partial last pixel.
  const left = join(dir, 'l.wav')
  const right = join(dir, 'r.wav')
  sox(['-n', '-r', '8000', '-b', '16', '-c', '1', left, 'synth', '600.0123', 'sine', '3', 'vol', '-3dB'])
  sox(['-n', '-r', '8000', '-b', '16', '-c', '1', right, 'synth', '600.0123', 'pinknoise', 'vol', '-12dB'])
  sox(['-M', left, right, audio])
  await analyzeFile(audio, { peaksPath: peaksFile })
  planar = ffmpegPlanar(audio, 2)
})
afterAll(() => rmSync(dir, { recursive: true, force: true }))

describe('peaks pyramid', () => {
  it('every level holds the min and max of its samples (within one 16-bit step, never inside the true envelope)', () => {
    const levels = readAllPeakLevels(peaksFile)
    expect(levels.map((l) => l.samplesPerPixel)).toEqual([256, 1024, 4096])
    const frames = planar[0].length
    for (const level of levels) {
      const spp = level.samplesPerPixel
      const pixels = Math.ceil(frames / spp)
      expect(frames % spp).not.toBe(0) // the last pixel is partial
      for (let c = 0; c < 2; c++) {
        const d = level.data[c]
        expect(d.length).toBe(2 * pixels)
        for (let p = 0; p < pixels; p++) {
          let lo = Infinity
          let hi = -Infinity
          for (let i = p * spp; i < Math.min(frames, (p + 1) * spp); i++) {
            lo = Math.min(lo, planar[c][i])
            hi = Math.max(hi, planar[c][i])
          }
          expect(d[2 * p]).toBeLessThanOrEqual(lo + 1e-9)
          expect(d[2 * p]).toBeGreaterThanOrEqual(lo - QUANTUM - 1e-9)
          expect(d[2 * p + 1]).toBeGreaterThanOrEqual(hi - 1e-9)
          expect(d[2 * p + 1]).toBeLessThanOrEqual(hi + QUANTUM + 1e-9)
        }
      }
    }
  })

  it('odd block sizes (not whole 4-frame chunks or pixels) build the same pyramid', () => {
    const frames = planar[0].length
    for (const block of [1000, 333, 4097]) {
      const file = join(dir, `odd-${block}.peaks`)
      const meter = new Meter({ sampleRate: 8000, channels: 2, channelMask: 0, frames })
      const builder = new PeaksBuilder(file, { sampleRate: 8000, channels: 2, frames })
      for (let i = 0; i < frames; i += block) {
        const part = planar.map((c) => c.subarray(i, Math.min(frames, i + block)))
        meter.push(part)
        builder.push(part, meter.lastScan)
      }
      builder.finish()
      expect(readAllPeakLevels(file)).toEqual(readAllPeakLevels(peaksFile))
    }
  })

  it('readPeaks returns the finest level within maxPoints, in the shared Peaks (wavesurfer.js) form', async () => {
    const p = Peaks.parse(await readPeaks(peaksFile))
    // Default 8000 pairs: 256 spp gives 18751 pixels, 1024 spp gives 4688.
    expect(p.samplesPerPixel).toBe(1024)
    expect(p.sampleRate).toBe(8000)
    expect(p.durationSeconds).toBeCloseTo(planar[0].length / 8000, 9)
    expect(p.data.length).toBe(2)
    for (const ch of p.data) {
      expect(ch.length).toBe(2 * Math.ceil(planar[0].length / 1024))
      for (let i = 0; i < ch.length; i += 2) {
        expect(ch[i]).toBeLessThanOrEqual(ch[i + 1])
        expect(ch[i]).toBeGreaterThanOrEqual(-1)
        expect(ch[i + 1]).toBeLessThanOrEqual(1)
      }
    }
    expect((await readPeaks(peaksFile, { maxPoints: 20000 })).samplesPerPixel).toBe(256)
    expect((await readPeaks(peaksFile, { maxPoints: 2000 })).samplesPerPixel).toBe(4096)
    // Nothing fits 10 pairs: the coarsest level is merged down until it does.
    const tiny = await readPeaks(peaksFile, { maxPoints: 10 })
    expect(tiny.data[0].length).toBeLessThanOrEqual(20)
    expect(tiny.samplesPerPixel % 4096).toBe(0)
    const coarse = await readPeaks(peaksFile, { maxPoints: 2000 })
    expect(Math.max(...tiny.data[0])).toBe(Math.max(...coarse.data[0]))
    expect(Math.min(...tiny.data[0])).toBe(Math.min(...coarse.data[0]))
  })

  it('clamps float samples beyond full scale to −1..1 (wavesurfer.js expects that range)', async () => {
    const loud = join(dir, 'loud.wav')
    ffmpeg([
      '-f',
      'lavfi',
      '-i',
      'sine=frequency=100:sample_rate=48000:duration=2',
      '-af',
      'volume=24',
      '-c:a',
      'pcm_f32le',
      loud,
    ])
    const file = join(dir, 'loud.peaks')
    await analyzeFile(loud, { peaksPath: file })
    const p = await readPeaks(file)
    const all = p.data.flat()
    expect(Math.max(...all)).toBe(1)
    expect(Math.min(...all)).toBe(-1)
  })

  it('a take of digital silence and a take shorter than one pixel give flat, valid overviews', async () => {
    const tiny = join(dir, 'tiny.wav')
    // -D: no dither, so the 100 samples are exact zeros.
    sox(['-D', '-n', '-r', '48000', '-b', '16', '-c', '1', tiny, 'trim', '0', '100s'])
    await analyzeFile(tiny, { peaksPath: join(dir, 'tiny.peaks') })
    const p = Peaks.parse(await readPeaks(join(dir, 'tiny.peaks')))
    expect(p.data).toEqual([[0, 0]])
  })
})
