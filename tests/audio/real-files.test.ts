// Files nobody in this project wrote: Debian alsa-utils' /usr/share/sounds/alsa/*.wav,
// and files written by the Debian reference tools themselves (ffmpeg, sox). Each is read
// by our reader and compared with ffprobe / soxi fields and with ffmpeg's own decode.
import { afterAll, describe, expect, it } from 'vitest'
import { readdirSync } from 'node:fs'
import { execFileSync } from 'node:child_process'
import { join } from 'node:path'
import { FileMetadata } from '@shared/schemas/analysis'
import { probeWav, readMetadata } from '../../server/audio/wav-reader'
import { ffmpegF32, ffprobe, makeTmpDir, readAll, soxi } from '../helpers/audio-files'

const ALSA = '/usr/share/sounds/alsa'
const alsaFiles = readdirSync(ALSA)
  .filter((f) => f.endsWith('.wav'))
  .sort()
const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

function interleave(planar: Float32Array[]): Float32Array {
  const ch = planar.length
  const out = new Float32Array(planar[0].length * ch)
  planar.forEach((p, c) => p.forEach((v, i) => (out[i * ch + c] = v)))
  return out
}

async function compareWithTools(path: string, opts: { sox: boolean }) {
  const info = await probeWav(path)
  const st = ffprobe(path).streams[0]
  expect(info.format.sampleRate).toBe(Number(st.sample_rate))
  expect(info.format.channels).toBe(st.channels)
  expect(info.format.bitsPerSample).toBe(st.bits_per_sample)
  expect(info.format.frames).toBe(st.duration_ts)
  expect(info.format.durationSeconds).toBeCloseTo(Number(st.duration), 5)
  if (opts.sox) {
    const s = soxi(path)
    expect([info.format.sampleRate, info.format.channels, info.format.frames, info.format.bitsPerSample]).toEqual([
      s.rate,
      s.channels,
      s.samples,
      s.bits,
    ])
  }
  expect(interleave(await readAll(path, info))).toEqual(ffmpegF32(path))
  const meta = await readMetadata(path, info)
  expect(() => FileMetadata.parse(meta)).not.toThrow()
  return { info, meta }
}

describe('Debian alsa-utils sounds', () => {
  it('the directory has the alsa-utils test sounds (installed by the test setup)', () => {
    expect(alsaFiles.length).toBeGreaterThanOrEqual(9)
  })

  it.each(alsaFiles)('%s: format fields match ffprobe and soxi, samples match ffmpeg bit for bit', async (name) => {
    const { info } = await compareWithTools(join(ALSA, name), { sox: true })
    expect(info.format).toMatchObject({ container: 'RIFF', encoding: 'pcm', recovered: false })
  })
})

describe('files written by ffmpeg and sox', () => {
  const src = 'sine=frequency=997:duration=0.25:sample_rate=44100'
  const ffmpegCases: [string, string[]][] = [
    ['ffmpeg s16 mono', ['-c:a', 'pcm_s16le']],
    ['ffmpeg s24 stereo (extensible, mask 0x3)', ['-ac', '2', '-c:a', 'pcm_s24le']],
    ['ffmpeg s32 5.1 (extensible, mask 0x3F)', ['-ac', '6', '-c:a', 'pcm_s32le']],
    ['ffmpeg f32 stereo', ['-ac', '2', '-c:a', 'pcm_f32le']],
    ['ffmpeg f64 mono', ['-c:a', 'pcm_f64le']],
    ['ffmpeg u8 mono', ['-c:a', 'pcm_u8']],
    ['ffmpeg RF64 (-rf64 always) s16 stereo', ['-ac', '2', '-c:a', 'pcm_s16le', '-rf64', 'always']],
    [
      'ffmpeg with bext (-write_bext 1)',
      [
        '-c:a',
        'pcm_s16le',
        '-write_bext',
        '1',
        '-metadata',
        'description=coil take',
        '-metadata',
        'originator=unit 3',
        '-metadata',
        'time_reference=96000',
      ],
    ],
  ]
  it.each(ffmpegCases)('%s', async (name, args) => {
    const path = tmp.file(`${name.replace(/\W+/g, '_')}.wav`)
    execFileSync('ffmpeg', ['-v', 'error', '-y', '-f', 'lavfi', '-i', src, ...args, path])
    const { info, meta } = await compareWithTools(path, { sox: true })
    if (name.includes('RF64')) expect(info.format.container).toBe('RF64')
    if (name.includes('mask 0x3)')) expect([info.formatTag, info.format.channelMask]).toEqual([0xfffe, 0x3])
    if (name.includes('mask 0x3F')) expect([info.formatTag, info.format.channelMask]).toEqual([0xfffe, 0x3f])
    if (name.includes('bext')) {
      expect(meta.bext).toMatchObject({ description: 'coil take', originator: 'unit 3', timeReference: 96000 })
      // ffmpeg's encoder stamp goes to LIST/INFO ISFT (observed).
      expect(meta.info.ISFT).toMatch(/^Lavf/)
    }
  })

  const soxCases: [string, string[]][] = [
    ['sox 16-bit stereo', ['-b', '16', '-c', '2']],
    ['sox 24-bit mono', ['-b', '24']],
    ['sox 32-bit float', ['-e', 'floating-point', '-b', '32']],
    ['sox 8-bit unsigned', ['-e', 'unsigned-integer', '-b', '8']],
    ['sox 4 channels 32-bit', ['-b', '32', '-c', '4']],
  ]
  it.each(soxCases)('%s', async (name, args) => {
    const path = tmp.file(`${name.replace(/\W+/g, '_')}.wav`)
    execFileSync('sox', ['-n', '-r', '48000', ...args, path, 'synth', '0.2', 'sine', '440', 'vol', '0.5'])
    await compareWithTools(path, { sox: true })
  })
})
