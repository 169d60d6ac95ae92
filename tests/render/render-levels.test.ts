// Level of rendered items, measured by an outside meter: ffmpeg's ebur128
// filter with peak=true (ITU-R BS.1770 / EBU R 128). Sources are made by sox and
// ffmpeg at 44.1, 48 and 96 kHz in 16-bit, 24-bit and 32-bit float; renders go
// to 16, 24 and 32 (float). ffmpeg prints one decimal, so its rounding alone is
// up to 0.05. Checks: within ±0.2 LU of the target when not flagged under
// target; true peak at or below the ceiling + 0.1 dB.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { ffmpegEbur128 } from '../helpers/reference-tools'
import { decode, ffmpeg, ffprobe, render, sox, tempDir } from './render-fixtures'

const dir = tempDir('render-levels')
const src = (name: string) => path.join(dir, name)

beforeAll(() => {
  sox([
    '-n',
    '-r',
    '48000',
    '-b',
    '24',
    '-c',
    '2',
    src('pink-48k24-stereo.wav'),
    'synth',
    '5',
    'pinknoise',
    'vol',
    '-30dB',
  ])
  sox([
    '-n',
    '-r',
    '44100',
    '-b',
    '16',
    '-c',
    '1',
    src('white-44k16-mono.wav'),
    'synth',
    '4',
    'whitenoise',
    'vol',
    '-20dB',
  ])
  sox([
    '-n',
    '-r',
    '96000',
    '-e',
    'floating-point',
    '-b',
    '32',
    '-c',
    '1',
    src('tone-96kf-mono.wav'),
    'synth',
    '3',
    'sine',
    '1000',
    'vol',
    '-35dB',
  ])
  sox([
    '-n',
    '-r',
    '96000',
    '-b',
    '24',
    '-c',
    '2',
    src('brown-96k24-stereo.wav'),
    'synth',
    '4',
    'brownnoise',
    'vol',
    '-12dB',
  ])
  ffmpeg([
    '-f',
    'lavfi',
    '-i',
    'anoisesrc=color=pink:amplitude=0.05:sample_rate=44100:duration=4:seed=3',
    '-ac',
    '2',
    '-c:a',
    'pcm_f32le',
    src('pink-44kf-stereo.wav'),
  ])
  // A quiet 440 Hz tone with one loud 5 ms burst of 3 kHz: reaching −18 LUFS would need about +10 dB, the ceiling allows none.
  ffmpeg([
    '-f',
    'lavfi',
    '-i',
    "aevalsrc='0.05*sin(2*PI*440*t)+if(between(t,2,2.005),0.9*sin(2*PI*3000*t),0)':s=48000:d=6",
    '-c:a',
    'pcm_s24le',
    src('burst-48k24-mono.wav'),
  ])
  sox([
    '-n',
    '-r',
    '48000',
    '-e',
    'floating-point',
    '-b',
    '32',
    '-c',
    '1',
    src('noise-short-float.wav'),
    'synth',
    '0.6',
    'whitenoise',
    'vol',
    '-20dB',
  ])
  sox([
    '-n',
    '-r',
    '48000',
    '-b',
    '24',
    '-c',
    '1',
    src('click-0.25s.wav'),
    'synth',
    '0.25',
    'sine',
    '2000',
    'vol',
    '-30dB',
  ])
})
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

const CASES = [
  {
    name: 'pink noise, 48 kHz 24-bit stereo → 24-bit at −18 LUFS',
    file: 'pink-48k24-stereo.wav',
    bitDepth: 24,
    target: -18,
    codec: 'pcm_s24le',
  },
  {
    name: 'white noise, 44.1 kHz 16-bit mono → 16-bit at −18 LUFS',
    file: 'white-44k16-mono.wav',
    bitDepth: 16,
    target: -18,
    codec: 'pcm_s16le',
  },
  {
    name: '1 kHz tone, 96 kHz float mono → 32-bit float at −23 LUFS',
    file: 'tone-96kf-mono.wav',
    bitDepth: 32,
    target: -23,
    codec: 'pcm_f32le',
  },
  {
    name: 'brown noise, 96 kHz 24-bit stereo → 16-bit (dithered) at −20 LUFS',
    file: 'brown-96k24-stereo.wav',
    bitDepth: 16,
    target: -20,
    codec: 'pcm_s16le',
  },
  {
    name: 'pink noise, 44.1 kHz float stereo → 24-bit (dithered) at −16 LUFS',
    file: 'pink-44kf-stereo.wav',
    bitDepth: 24,
    target: -16,
    codec: 'pcm_s24le',
  },
] as const

describe('loudness normalisation, measured by ffmpeg ebur128', () => {
  for (const c of CASES) {
    it(c.name, async () => {
      const out = path.join(dir, `out-${c.file}`)
      const r = await render(src(c.file), out, {
        settings: { normalize: 'loudness', loudnessTargetLufs: c.target, bitDepth: c.bitDepth },
      })
      const ref = ffmpegEbur128(out)
      expect(r.underTargetDb).toBeNull()
      expect(Math.abs(ref.integratedLufs - c.target)).toBeLessThanOrEqual(0.2)
      expect(ref.truePeakDbtp).toBeLessThanOrEqual(-1 + 0.1)
      // The source's rate and channels, the asked depth (ffprobe, Debian ffmpeg).
      const inProbe = ffprobe(src(c.file)).stream
      const outProbe = ffprobe(out).stream
      expect(outProbe.codec_name).toBe(c.codec)
      expect(outProbe.sample_rate).toBe(inProbe.sample_rate)
      expect(outProbe.channels).toBe(inProbe.channels)
      expect(Number(outProbe.duration)).toBeCloseTo(Number(inProbe.duration), 4)
      // What the renderer reports is what the engine measures on the file (it meters the samples it writes).
      const again = (await analyzeFile(out)).analysis
      expect(r.levels.integratedLufs!).toBeCloseTo(again.loudness.integratedLufs!, 3)
      expect(r.levels.truePeakDbtp!).toBeCloseTo(again.levels.truePeakDbtp!, 3)
    })
  }

  it('a range of a take renders just that range (duration by ffprobe) at the target', async () => {
    const out = path.join(dir, 'range.wav')
    const r = await render(src('pink-48k24-stereo.wav'), out, { start: 1.25, end: 3.75 })
    expect(r.sourceStartFrame).toBe(60000)
    expect(r.sourceEndFrame).toBe(180000)
    expect(Number(ffprobe(out).stream.duration)).toBeCloseTo(2.5, 6)
    expect(Math.abs(ffmpegEbur128(out).integratedLufs - -18)).toBeLessThanOrEqual(0.2)
  })
})

describe('the true-peak ceiling (gain only, no limiter)', () => {
  it('a loud peaky burst stops at the ceiling and is flagged under target by how much', async () => {
    const out = path.join(dir, 'burst.wav')
    const r = await render(src('burst-48k24-mono.wav'), out, {
      settings: { loudnessTargetLufs: -18, truePeakCeilingDbtp: -1 },
    })
    const ref = ffmpegEbur128(out)
    expect(r.limited).toBe(true)
    expect(ref.truePeakDbtp).toBeLessThanOrEqual(-1 + 0.1)
    // The highest gain the ceiling allows: the peak sits at the ceiling, not below it.
    expect(ref.truePeakDbtp).toBeGreaterThanOrEqual(-1 - 0.3)
    expect(r.underTargetDb).not.toBeNull()
    expect(r.underTargetDb!).toBeGreaterThan(5)
    // "How much": the target minus the loudness ffmpeg measures on the file.
    expect(Math.abs(r.underTargetDb! - (-18 - ref.integratedLufs))).toBeLessThanOrEqual(0.2)
  })

  it('peak normalisation to −6 dBTP lands there by ffmpeg’s true peak (two BS.1770 meters agree within 0.3 dB on tones)', async () => {
    const out = path.join(dir, 'peak.wav')
    const r = await render(src('tone-96kf-mono.wav'), out, {
      settings: { normalize: 'peak', peakTargetDbtp: -6, bitDepth: 24 },
    })
    expect(r.mode).toBe('peak')
    expect(r.underTargetDb).toBeNull()
    expect(Math.abs(ffmpegEbur128(out).truePeakDbtp - -6)).toBeLessThanOrEqual(0.3)
  })

  it('"none" keeps the level of a source under the ceiling and lowers one above it', async () => {
    const quiet = path.join(dir, 'none-quiet.wav')
    const q = await render(src('white-44k16-mono.wav'), quiet, { settings: { normalize: 'none', bitDepth: 16 } })
    expect(q.gainDb).toBe(0)
    // ffmpeg prints one decimal, so two readings of the same level can differ by one step (0.1) plus float noise.
    expect(
      Math.abs(ffmpegEbur128(quiet).integratedLufs - ffmpegEbur128(src('white-44k16-mono.wav')).integratedLufs),
    ).toBeLessThanOrEqual(0.1 + 1e-9)
    const loud = path.join(dir, 'none-loud.wav')
    const l = await render(src('burst-48k24-mono.wav'), loud, {
      settings: { normalize: 'none', truePeakCeilingDbtp: -6 },
    })
    expect(l.gainDb).toBeLessThan(0)
    expect(ffmpegEbur128(loud).truePeakDbtp).toBeLessThanOrEqual(-6 + 0.1)
  })
})

describe('short items and fades', () => {
  it('corrects once when long fades move a short item off target by more than 0.1 LU', async () => {
    const out = path.join(dir, 'short-faded.wav')
    const r = await render(src('noise-short-float.wav'), out, {
      settings: { fadeInMs: 200, fadeOutMs: 200, bitDepth: 24 },
    })
    expect(r.passes).toBe(2)
    expect(Math.abs(ffmpegEbur128(out).integratedLufs - -18)).toBeLessThanOrEqual(0.2)
  })

  it('an item shorter than one 400 ms block has no integrated loudness (BS.1770-4 §2.8) and is normalised by its short-sound loudness', async () => {
    const out = path.join(dir, 'click.wav')
    const r = await render(src('click-0.25s.wav'), out, {
      settings: { normalize: 'loudness', loudnessTargetLufs: -24, truePeakCeilingDbtp: -1 },
    })
    expect(r.mode).toBe('loudness')
    expect(r.levels.integratedLufs).toBeNull()
    expect(r.levels.shortSoundLufs).not.toBeNull()
    expect(Math.abs(r.levels.shortSoundLufs! - -24)).toBeLessThanOrEqual(0.1)
    expect(r.levels.preciseTruePeakDbtp!).toBeLessThanOrEqual(-1)
  })

  it('a silent item under 400 ms has no loudness at all and keeps its gain', async () => {
    const silent = path.join(dir, 'silent-0.2s.wav')
    sox(['-n', '-r', '48000', '-b', '24', '-c', '1', silent, 'trim', '0', '0.2'])
    const r = await render(silent, path.join(dir, 'silent-out.wav'), { settings: { normalize: 'loudness' } })
    expect(r.gainDb).toBe(0)
    expect(r.levels.shortSoundLufs).toBeNull()
  })

  it('fades are equal-power (quarter sine) and the first and last samples are silent, decoded by ffmpeg', async () => {
    const out = path.join(dir, 'fades.wav')
    const r = await render(src('tone-96kf-mono.wav'), out, { settings: { fadeInMs: 10, fadeOutMs: 20, bitDepth: 32 } })
    expect(r.fadeInFrames).toBe(960)
    expect(r.fadeOutFrames).toBe(1920)
    const [y] = decode(out, 1)
    const [x] = decode(src('tone-96kf-mono.wav'), 1)
    const g = 10 ** (r.gainDb / 20)
    expect(Math.abs(y[0])).toBe(0)
    expect(Math.abs(y[y.length - 1])).toBe(0)
    const n = y.length
    for (let k = 1; k < 960; k++) {
      if (Math.abs(x[k]) < 1e-3) continue
      expect(y[k] / (g * x[k])).toBeCloseTo(Math.sin((Math.PI / 2) * (k / 960)), 4)
    }
    for (let j = 1; j < 1920; j++) {
      const k = n - 1 - j
      if (Math.abs(x[k]) < 1e-3) continue
      expect(y[k] / (g * x[k])).toBeCloseTo(Math.sin((Math.PI / 2) * (j / 1920)), 4)
    }
    // Between the fades: the source times the gain, unchanged (float output, no dither).
    for (let k = 960; k < n - 1920; k += 997) expect(y[k]).toBeCloseTo(g * x[k], 6)
  })
})
