// Damaged and unusual files built by hand (not by our writer): placeholder data sizes
// left by recorders that stopped mid-take, sizes past EOF, odd chunks and their pad byte
// (RIFF: chunks start on even offsets), unknown chunks, and the refusals.
import { afterAll, describe, expect, it } from 'vitest'
import { writeFileSync } from 'node:fs'
import { probeWav, readMetadata, WavFormatError } from '../../server/audio/wav-reader'
import { writeWav } from '../../server/audio/wav-writer'
import { buildWav, ffmpegF32, ffprobe, fmtPayload, makeTmpDir, pcm16, rawChunk, readAll } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

let n = 0
function file(bytes: Buffer): string {
  const p = tmp.file(`f${n++}.wav`)
  writeFileSync(p, bytes)
  return p
}

const fmt16 = (channels = 1, rate = 8000) => ({ id: 'fmt ', payload: fmtPayload({ channels, rate, bits: 16 }) })
const samples = [0, 1000, -1000, 32767, -32768, 5, -5, 12345]

describe('placeholder and overlong data sizes are recovered', () => {
  it.each([0, 0xffffffff])(
    'data size 0x%s: frames from the file length, recovered=true, same samples as ffmpeg decodes',
    async (size) => {
      const path = file(buildWav([fmt16(2), { id: 'data', payload: pcm16(samples), size }], 'RIFF', size))
      const info = await probeWav(path)
      expect(info.format).toMatchObject({ frames: 4, recovered: true })
      const [l, r] = await readAll(path, info)
      expect(Array.from(l)).toEqual([0, -1000, -32768, -5].map((v) => v / 32768))
      expect(Array.from(r)).toEqual([1000, 32767, 5, 12345].map((v) => v / 32768))
      // ffmpeg treats both placeholders as "read to end of file" as well (observed, ffmpeg 5.1).
      expect(Array.from(ffmpegF32(path))).toEqual(samples.map((v) => v / 32768))
    },
  )

  it.each([
    ['RIFF', 0],
    ['RIFF', 0xffffffff],
    ['RF64', 0],
  ] as const)('%s written with dataSizeOverride %i reads back all frames, recovered=true', async (container, size) => {
    const p = tmp.file(`override-${container}-${size}.wav`)
    const x = Float32Array.from({ length: 333 }, (_, i) => (i % 7) / 8)
    await writeWav(p, [x, x], {
      sampleRate: 48000,
      channels: 2,
      encoding: 'pcm',
      bitsPerSample: 24,
      container,
      dataSizeOverride: size,
    })
    const info = await probeWav(p)
    expect(info.format).toMatchObject({ container, frames: 333, recovered: true })
    expect((await readAll(p, info))[1]).toEqual(x)
  })

  it('data size 0 in a file that really ends after the header is an empty take, not a recovery', async () => {
    const info = await probeWav(file(buildWav([fmt16(), { id: 'data', payload: Buffer.alloc(0) }])))
    expect(info.format).toMatchObject({ frames: 0, durationSeconds: 0, recovered: false })
  })

  it('a declared size past EOF (copy cut short) is clamped to whole frames in the file, recovered=true', async () => {
    const bytes = buildWav([fmt16(2), { id: 'data', payload: pcm16(samples), size: 1_000_000 }])
    const path = file(bytes.subarray(0, bytes.length - 3)) // 3 bytes short: the last frame is torn
    const info = await probeWav(path)
    expect(info.format).toMatchObject({ frames: 3, recovered: true })
    expect(info.dataBytes).toBe(12)
    expect(info.chunks.at(-1)).toEqual({ id: 'data', offset: info.dataOffset, size: 13 })
    const [l] = await readAll(path, info)
    expect(Array.from(l)).toEqual([0, -1000, -32768].map((v) => v / 32768))
  })
})

describe('chunk walking', () => {
  it('odd-sized unknown chunks are followed by a pad byte; unknown chunks before and after data are skipped and listed', async () => {
    const path = file(
      buildWav([
        { id: 'abc ', payload: Buffer.from('xyz') }, // 3 bytes + pad
        fmt16(),
        { id: 'PAD ', payload: Buffer.alloc(7) },
        { id: 'data', payload: pcm16([1, 2, 3]) },
        { id: 'zzzz', payload: Buffer.from('q') },
        {
          id: 'LIST',
          payload: Buffer.concat([Buffer.from('INFO'), rawChunk({ id: 'INAM', payload: Buffer.from('odd\0') })]),
        },
      ]),
    )
    const info = await probeWav(path)
    expect(info.chunks.map((c) => [c.id, c.offset, c.size])).toEqual([
      ['abc ', 20, 3],
      ['fmt ', 32, 16],
      ['PAD ', 56, 7],
      ['data', 72, 6],
      ['zzzz', 86, 1],
      ['LIST', 96, 16],
    ])
    expect(info.format.frames).toBe(3)
    expect((await readMetadata(path, info)).info).toEqual({ INAM: 'odd' })
    // ffprobe skips the same chunks: 3 samples of 16-bit mono.
    expect(ffprobe(path).streams[0].duration_ts).toBe(3)
  })

  it('an odd 8-bit data chunk has its pad byte, and the LIST after it is found', async () => {
    const fmt8 = { id: 'fmt ', payload: fmtPayload({ channels: 1, rate: 8000, bits: 8 }) }
    const path = file(
      buildWav([
        fmt8,
        { id: 'data', payload: Buffer.from([0, 128, 255]) },
        {
          id: 'LIST',
          payload: Buffer.concat([Buffer.from('INFO'), rawChunk({ id: 'ICMT', payload: Buffer.from('c\0') })]),
        },
      ]),
    )
    const info = await probeWav(path)
    const [x] = await readAll(path, info)
    expect(Array.from(x)).toEqual([-1, 0, 127 / 128])
    expect((await readMetadata(path, info)).info).toEqual({ ICMT: 'c' })
  })

  it('a writer that forgot the pad byte after an odd chunk is tolerated (the next id is found unpadded)', async () => {
    const path = file(
      buildWav([
        { id: 'odd ', payload: Buffer.from('abc'), noPad: true },
        fmt16(),
        { id: 'data', payload: pcm16([7]) },
      ]),
    )
    const info = await probeWav(path)
    expect(info.chunks.map((c) => c.id)).toEqual(['odd ', 'fmt ', 'data'])
    expect(info.format.frames).toBe(1)
  })

  it('fmt after data is still found when the data size is real', async () => {
    const info = await probeWav(file(buildWav([{ id: 'data', payload: pcm16([1, 2]) }, fmt16()])))
    expect(info.format.frames).toBe(2)
  })

  it('the RIFF size is advisory: a stale small value does not hide the chunks (common practice)', async () => {
    const info = await probeWav(file(buildWav([fmt16(), { id: 'data', payload: pcm16([1, 2, 3, 4]) }], 'RIFF', 4)))
    expect(info.format).toMatchObject({ frames: 4, recovered: false })
  })

  it('thousands of empty chunks are walked in bounded time: refused before data, ignored after it', async () => {
    const empties = Array.from({ length: 5000 }, () => ({ id: 'nul ', payload: Buffer.alloc(0) }))
    const before = file(buildWav([fmt16(), ...empties, { id: 'data', payload: pcm16([1]) }]))
    await expect(probeWav(before)).rejects.toThrow(/more than 4096 chunks before the data chunk/)
    const after = await probeWav(file(buildWav([fmt16(), { id: 'data', payload: pcm16([1]) }, ...empties])))
    expect(after.format.frames).toBe(1)
    expect(after.chunks.length).toBe(4096)
  })

  it('trailing garbage after the last chunk ends the walk', async () => {
    const bytes = Buffer.concat([
      buildWav([fmt16(), { id: 'data', payload: pcm16([1, 2]) }]),
      Buffer.from([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]),
    ])
    const info = await probeWav(file(bytes))
    expect(info.chunks.map((c) => c.id)).toEqual(['fmt ', 'data'])
  })
})

describe('legacy fmt variants', () => {
  it('12-bit PCM (tag 1, left-justified in 16 bits) reads as a 16-bit container with 12 valid bits', async () => {
    const path = file(
      buildWav([
        { id: 'fmt ', payload: fmtPayload({ channels: 1, rate: 8000, bits: 12, blockAlign: 2 }) },
        { id: 'data', payload: pcm16([0x7ff0, -0x8000]) },
      ]),
    )
    const info = await probeWav(path)
    expect(info.format).toMatchObject({ bitsPerSample: 16, validBitsPerSample: 12 })
    expect(Array.from((await readAll(path, info))[0])).toEqual([0x7ff0 / 32768, -1])
  })

  it('"24 bits" with a 4-byte block align per channel is taken as 24-in-32', async () => {
    const data = Buffer.alloc(8)
    data.writeInt32LE(0x12345600, 0)
    data.writeInt32LE(-0x100, 4)
    const path = file(
      buildWav([
        { id: 'fmt ', payload: fmtPayload({ channels: 2, rate: 8000, bits: 24, blockAlign: 8 }) },
        { id: 'data', payload: data },
      ]),
    )
    const info = await probeWav(path)
    expect(info.format).toMatchObject({ bitsPerSample: 32, validBitsPerSample: 24, frames: 1 })
    const [l, r] = await readAll(path, info)
    expect([l[0], r[0]]).toEqual([Math.fround(0x12345600 / 2 ** 31), -0x100 / 2 ** 31])
  })
})

describe('refusals are WavFormatError with a sentence saying what is wrong', () => {
  const data = { id: 'data', payload: pcm16([1, 2]) }
  const cases: [string, Buffer, RegExp][] = [
    [
      'not RIFF',
      Buffer.from('ID3\x04 not a wave file at all'),
      /^not a WAVE file: the first bytes are not RIFF, RF64 or BW64$/,
    ],
    [
      'RIFF but not WAVE',
      Buffer.concat([Buffer.from('RIFF'), Buffer.alloc(4), Buffer.from('AVI LIST')]),
      /^not a WAVE file: the RIFF form type is "AVI "$/,
    ],
    ['header cut short', Buffer.from('RIFF\x04\x00\x00\x00WA'), /^truncated: the file ends inside the RIFF header$/],
    ['fmt missing', buildWav([data]), /^fmt chunk missing$/],
    ['data missing', buildWav([fmt16()]), /^data chunk missing$/],
    ['fmt truncated', buildWav([fmt16()]).subarray(0, 30), /^truncated: fmt chunk ends past end of file$/],
    [
      'MPEG',
      buildWav([
        { id: 'fmt ', payload: fmtPayload({ tag: 0x55, channels: 2, rate: 44100, bits: 0, blockAlign: 1 }) },
        data,
      ]),
      /^unsupported encoding: format tag 0x0055 \(MPEG\)$/,
    ],
    [
      '24-bit float',
      buildWav([{ id: 'fmt ', payload: fmtPayload({ tag: 3, channels: 1, rate: 48000, bits: 24 }) }, data]),
      /^24-bit float is not a valid encoding$/,
    ],
    ['4 kHz', buildWav([fmt16(1, 4000), data]), /^sample rate 4000 Hz is outside 8000..384000$/],
    [
      '12 channels',
      buildWav([{ id: 'fmt ', payload: fmtPayload({ channels: 12, rate: 48000, bits: 16 }) }, data]),
      /^channels 12 outside 1..8$/,
    ],
    [
      'unknown extensible GUID',
      (() => {
        const f = fmtPayload({ channels: 1, rate: 48000, bits: 16, ext: { validBits: 16, mask: 4, subTag: 1 } })
        f[30] = 0x21 // break the KSDATAFORMAT base GUID
        return buildWav([{ id: 'fmt ', payload: f }, data])
      })(),
      /^unsupported encoding: extensible sub-format/,
    ],
    [
      'block align mismatch',
      buildWav([{ id: 'fmt ', payload: fmtPayload({ channels: 2, rate: 48000, bits: 16, blockAlign: 6 }) }, data]),
      /^block align 6 does not match 2 channels of 16-bit samples \(4\)$/,
    ],
    [
      'garbage chunk id before data',
      buildWav([fmt16(), { id: '\x01\x02\x03\x04', payload: Buffer.alloc(2) }, data]),
      /^malformed chunk header at byte 36$/,
    ],
  ]
  it.each(cases)('%s', async (_name, bytes, message) => {
    const err = await probeWav(file(bytes)).catch((e: unknown) => e)
    expect(err).toBeInstanceOf(WavFormatError)
    expect((err as WavFormatError).message).toMatch(message)
    expect((err as WavFormatError).reason).toBe((err as WavFormatError).message)
  })
})
