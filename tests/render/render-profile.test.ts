// Renders under an export profile: channel mapping and resampling run before the
// loudness normalisation and the true-peak ceiling, so the delivered file meets them.
// References: ITU-R BS.1770-4 loudness by the engine's meter and by ffmpeg's ebur128
// filter (Debian); the alias check reads the engine's own Welch spectrum
// (server/audio/spectrum.ts); formats by Debian's sox --i; signals from sox.
import { execFileSync } from 'node:child_process'
import path from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import fs from 'node:fs'
import type { ExportProfile } from '@shared/schemas/packs'
import { SpectrumMeter } from '../../server/audio/spectrum'
import { probeWav, readFrames } from '../../server/audio/wav-reader'
import { TooLongForProfile } from '../../server/render/render'
import { ffmpegEbur128 } from '../helpers/reference-tools'
import { chunks, decode, render, sox, tempDir } from './render-fixtures'

const dir = tempDir('profile')
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

const profile = (o: Partial<ExportProfile>): ExportProfile => ({
  sampleRate: 48000,
  channels: 'mono',
  bitDepth: 16,
  maxSeconds: null,
  maxNameLength: null,
  layout: 'flat',
  ...o,
})

/** sox --i, one field (Debian's sox: -r rate, -c channels, -b bits). */
const soxi = (file: string, flag: string) =>
  Number(execFileSync('sox', ['--i', flag, file], { encoding: 'utf8' }).trim())

/** The largest bin of the engine's averaged spectrum, in dB (power of a bin; only differences are used). */
async function peakBinDb(file: string, minHz = 20): Promise<number> {
  const info = await probeWav(file)
  const meter = new SpectrumMeter(info.format.sampleRate, info.format.channels, info.format.frames)
  for await (const block of readFrames(file, info)) meter.push(block)
  const s = meter.powerSpectrum()!
  let max = 0
  const from = Math.ceil((minHz * s.fftSize) / s.sampleRate)
  for (let k = from; k < s.power.length; k++) max = Math.max(max, s.power[k])
  return 10 * Math.log10(max)
}

// sox's null input takes its rate from the options before it (-r RATE -n); after it they set only the output.
describe('export profile renders', () => {
  it('a 96 kHz stereo take at 48 kHz mono meets its loudness target within 0.1 LU and keeps under the ceiling', async () => {
    const src = path.join(dir, 'stereo96.wav')
    // Two different channels (pink noise and a 220 Hz tone) so a mono sum is not a plain copy.
    sox(['-r', '96000', '-n', '-b', '24', '-c', '2', src, 'synth', '8', 'pinknoise', 'sine', '220', 'gain', '-14'])
    const out = path.join(dir, 'mono48.wav')
    const r = await render(src, out, {
      settings: { normalize: 'loudness', loudnessTargetLufs: -20, truePeakCeilingDbtp: -1, profile: profile({}) },
    })
    // sox --i (Debian) reports the delivered format.
    expect([soxi(out, '-r'), soxi(out, '-c'), soxi(out, '-b')]).toEqual([48000, 1, 16])
    expect(r.sampleRate).toBe(48000)
    expect(r.channels).toBe(1)
    expect(r.frames).toBe(8 * 48000)
    // BS.1770-4 by the engine's meter on the samples written…
    expect(Math.abs(r.levels.integratedLufs! - -20)).toBeLessThanOrEqual(0.1)
    // …and by ffmpeg's ebur128 (it prints one decimal: 0.1 LU plus its rounding).
    const ref = ffmpegEbur128(out)
    expect(Math.abs(ref.integratedLufs - -20)).toBeLessThanOrEqual(0.15)
    expect(r.levels.preciseTruePeakDbtp!).toBeLessThanOrEqual(-1 + 0.005)
    // bext's coding history names the source, the conversion and the output format (EBU R 98 lines).
    const history = chunks(out).get('bext')!.toString('latin1', 602)
    expect(history).toContain('A=PCM,F=96000,W=24,M=stereo,T=source take')
    expect(history).toMatch(/F=48000,W=32,M=mono,T=mono sum, resampled 96000 to 48000 Hz/)
    expect(history).toContain('A=PCM,F=48000,W=16,M=mono')
  })

  it('shows no aliasing above −90 dB for a tone swept through the band the new rate cannot hold', async () => {
    // Common practice for judging a downsampler: sweep a tone above the new Nyquist frequency and look for
    // anything folded back below it. The reference is a 1 kHz tone of the same level through the same path.
    // Both fade in and out over 0.1 s: an abrupt start would put a click, in band, into the source itself.
    const sweep = path.join(dir, 'sweep96.wav')
    const tone = path.join(dir, 'tone96.wav')
    sox([
      '-r',
      '96000',
      '-n',
      '-b',
      '32',
      '-e',
      'floating-point',
      '-c',
      '1',
      sweep,
      'synth',
      '6',
      'sine',
      '25000-47000',
      'vol',
      '0.5',
      'fade',
      'h',
      '0.1',
      '6',
      '0.1',
    ])
    sox([
      '-r',
      '96000',
      '-n',
      '-b',
      '32',
      '-e',
      'floating-point',
      '-c',
      '1',
      tone,
      'synth',
      '6',
      'sine',
      '1000',
      'vol',
      '0.5',
      'fade',
      'h',
      '0.1',
      '6',
      '0.1',
    ])
    const flat = { normalize: 'none' as const, fadeInMs: 0, fadeOutMs: 0, profile: profile({ bitDepth: 32 }) }
    const sweepOut = path.join(dir, 'sweep48.wav')
    const toneOut = path.join(dir, 'tone48.wav')
    await render(sweep, sweepOut, { settings: flat })
    await render(tone, toneOut, { settings: flat })
    const refDb = await peakBinDb(toneOut)
    const aliasDb = await peakBinDb(sweepOut)
    expect(refDb - aliasDb).toBeGreaterThanOrEqual(90)
  })

  it('takes the left or the right channel alone, and 44.1 kHz with a loop scaled to the new rate', async () => {
    const src = path.join(dir, 'lr48.wav')
    sox(['-r', '48000', '-n', '-b', '24', '-c', '2', src, 'synth', '2', 'sine', '441', 'sine', '882', 'gain', '-12'])
    const right = path.join(dir, 'right.wav')
    const r = await render(src, right, {
      settings: {
        normalize: 'none',
        fadeInMs: 0,
        fadeOutMs: 0,
        profile: profile({ channels: 'right', sampleRate: 'source', bitDepth: 24 }),
      },
    })
    expect([soxi(right, '-r'), soxi(right, '-c'), soxi(right, '-b')]).toEqual([48000, 1, 24])
    expect(r.frames).toBe(2 * 48000)
    // The right channel held the 882 Hz tone: about 2 × 882 zero crossings a second (ffmpeg decodes it).
    const [x] = decode(right, 1)
    let crossings = 0
    for (let i = 1; i < x.length; i++) if (x[i - 1] < 0 !== x[i] < 0) crossings++
    expect(crossings / 2).toBeGreaterThan(2 * 870)
    expect(crossings / 2).toBeLessThan(2 * 895)
    const loop = path.join(dir, 'loop441.wav')
    const l = await render(src, loop, {
      kind: 'loop',
      start: 0.5,
      end: 1.5,
      settings: { profile: profile({ channels: 'left', sampleRate: 44100 }) },
    })
    expect([soxi(loop, '-r'), soxi(loop, '-c'), soxi(loop, '-b')]).toEqual([44100, 1, 16])
    // The smpl loop spans the whole converted range: its end is the last frame (smpl, end inclusive).
    const smpl = chunks(loop).get('smpl')!
    const loopEnd = smpl.readUInt32LE(36 + 12)
    expect(loopEnd).toBe(l.frames - 1)
    expect(Math.abs(l.frames - 44100)).toBeLessThanOrEqual(2)
  })

  it('refuses an item longer than the profile allows, naming its length', async () => {
    const src = path.join(dir, 'long.wav')
    sox(['-r', '48000', '-n', '-b', '16', '-c', '1', src, 'synth', '3', 'sine', '100'])
    const out = path.join(dir, 'long-out.wav')
    await expect(render(src, out, { settings: { profile: profile({ maxSeconds: 2 }) } })).rejects.toThrow(
      TooLongForProfile,
    )
    await expect(render(src, out, { settings: { profile: profile({ maxSeconds: 2 }) } })).rejects.toThrow(
      /lasts 3\.00 s, longer than the export profile's limit of 2 s/,
    )
    expect(fs.existsSync(out)).toBe(false)
  })
})
