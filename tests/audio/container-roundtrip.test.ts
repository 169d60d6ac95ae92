// Write then read back every encoding, 1..8 channels, 8 kHz..384 kHz, in RIFF, RF64 and
// BW64. Sample values are checked exactly, and each file is also read by the Debian
// reference tools: ffprobe (stream fields), ffmpeg (its own decode to 32-bit float,
// compared sample by sample) and soxi (rate, channels, bits, samples).
import { afterAll, describe, expect, it } from 'vitest'
import { writeFileSync, readFileSync } from 'node:fs'
import { execFileSync } from 'node:child_process'
import { probeWav } from '../../server/audio/wav-reader'
import { encodeWav, writeWav, WavWriter, type WavWriteOptions } from '../../server/audio/wav-writer'
import { prng } from '../../server/audio/synth'
import { ffmpegF32, ffprobe, makeTmpDir, readAll, soxi } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

interface Enc {
  name: string
  o: Pick<WavWriteOptions, 'encoding' | 'bitsPerSample' | 'validBitsPerSample' | 'extensible'>
  ffCodec: string
  soxEncoding: string
}
const ENCODINGS: Enc[] = [
  {
    name: 'pcm 8-bit unsigned',
    o: { encoding: 'pcm', bitsPerSample: 8 },
    ffCodec: 'pcm_u8',
    soxEncoding: 'Unsigned Integer PCM',
  },
  {
    name: 'pcm 16',
    o: { encoding: 'pcm', bitsPerSample: 16 },
    ffCodec: 'pcm_s16le',
    soxEncoding: 'Signed Integer PCM',
  },
  {
    name: 'pcm 24',
    o: { encoding: 'pcm', bitsPerSample: 24 },
    ffCodec: 'pcm_s24le',
    soxEncoding: 'Signed Integer PCM',
  },
  {
    name: 'pcm 32',
    o: { encoding: 'pcm', bitsPerSample: 32 },
    ffCodec: 'pcm_s32le',
    soxEncoding: 'Signed Integer PCM',
  },
  {
    name: 'float 32',
    o: { encoding: 'float', bitsPerSample: 32 },
    ffCodec: 'pcm_f32le',
    soxEncoding: 'Floating Point PCM',
  },
  {
    name: 'float 64',
    o: { encoding: 'float', bitsPerSample: 64 },
    ffCodec: 'pcm_f64le',
    soxEncoding: 'Floating Point PCM',
  },
  {
    name: 'extensible 24-in-32',
    o: { encoding: 'pcm', bitsPerSample: 32, validBitsPerSample: 24, extensible: true },
    ffCodec: '',
    soxEncoding: '',
  },
]
const CONTAINERS = ['RIFF', 'RF64', 'BW64'] as const
const RATES = [8000, 11025, 22050, 44100, 48000, 96000, 192000, 384000]
/** WAVEFORMATEXTENSIBLE speaker masks for 1..8 channels (the usual mono..7.1 layouts, from memory). */
const MASKS = [0x4, 0x3, 0x7, 0x33, 0x37, 0x3f, 0x13f, 0x63f]

/**
 * Test signal: exact integer codes of the valid bits (both extremes, 0, ±1, random) so that a
 * correct write+read returns them bit-exactly; float gets values beyond ±1 as well, which must
 * pass unclipped.
 */
function signal(
  e: Enc,
  channels: number,
  frames: number,
  seed: number,
): { planar: Float64Array[]; expected: Float32Array[] } {
  const r = prng(seed)
  const planar: Float64Array[] = []
  const expected: Float32Array[] = []
  const vb = e.o.validBitsPerSample ?? e.o.bitsPerSample
  const full = 2 ** (vb - 1)
  for (let c = 0; c < channels; c++) {
    const x = new Float64Array(frames)
    for (let i = 0; i < frames; i++) {
      if (e.o.encoding === 'float') x[i] = i === 0 ? 1.5 : i === 1 ? -2 : (r() * 2 - 1) * 1.2
      else {
        const k = i === 0 ? -full : i === 1 ? full - 1 : i === 2 ? 0 : i === 3 ? -1 : Math.floor(r() * 2 * full) - full
        x[i] = k / full
      }
    }
    planar.push(x)
    // Reader output is Float32Array, so float64 and 32-bit PCM values are rounded to float32 once.
    expected.push(Float32Array.from(x))
  }
  return { planar, expected }
}

function interleave(planar: Float32Array[]): Float32Array {
  const ch = planar.length
  const out = new Float32Array(planar[0].length * ch)
  planar.forEach((p, c) => p.forEach((v, i) => (out[i * ch + c] = v)))
  return out
}

const cases = ENCODINGS.flatMap((e, ei) =>
  CONTAINERS.map((container, ci) => {
    const i = ei * CONTAINERS.length + ci
    return { e, container, channels: 1 + (i % 8), rate: RATES[(i * 3) % 8] }
  }),
)

describe('round trip of every encoding and container', () => {
  it.each(cases)('$e.name, $container, $channels ch, $rate Hz', async ({ e, container, channels, rate }) => {
    const frames = 1001 // odd, so 8-bit and 24-bit mono data need the RIFF pad byte
    const ext = e.o.extensible === true
    const opts: WavWriteOptions = {
      ...e.o,
      container,
      channels,
      sampleRate: rate,
      channelMask: ext ? MASKS[channels - 1] : undefined,
    }
    const { planar, expected } = signal(e, channels, frames, 17 + channels)
    const path = tmp.file(`rt-${e.name.replace(/\W+/g, '_')}-${container}.wav`)
    await writeWav(path, planar, opts)

    const info = await probeWav(path)
    expect(info.format).toEqual({
      container,
      encoding: e.o.encoding,
      bitsPerSample: e.o.bitsPerSample,
      validBitsPerSample: e.o.validBitsPerSample ?? e.o.bitsPerSample,
      sampleRate: rate,
      channels,
      channelMask: ext ? MASKS[channels - 1] : 0,
      frames,
      durationSeconds: frames / rate,
      recovered: false,
    })
    expect(info.formatTag).toBe(ext ? 0xfffe : e.o.encoding === 'float' ? 3 : 1)
    expect(info.blockAlign).toBe(channels * (e.o.bitsPerSample / 8))
    const back = await readAll(path, info, { blockFrames: 300 })
    for (let c = 0; c < channels; c++) expect(back[c]).toEqual(expected[c])

    const probe = ffprobe(path)
    const st = probe.streams[0]
    expect(Number(st.sample_rate)).toBe(rate)
    expect(st.channels).toBe(channels)
    if (!ext) {
      expect(st.codec_name).toBe(e.ffCodec)
      expect(st.bits_per_sample).toBe(e.o.bitsPerSample)
      expect(st.duration_ts).toBe(frames)
      // ffmpeg decodes to float by the same scaling (integer / 2^(bits-1), u8 offset 128): bit-exact.
      expect(ffmpegF32(path)).toEqual(interleave(back))
    } else {
      // ffprobe 5.1 (Debian 12) takes wValidBitsPerSample as the sample width and reports a
      // 4/3 longer "pcm_f24le" stream (observed), and sox refuses "padded samples". So the
      // data bytes are cut out and decoded by ffmpeg as raw 32-bit container integers.
      const raw = tmp.file('rt-ext.raw')
      writeFileSync(raw, readFileSync(path).subarray(info.dataOffset, info.dataOffset + info.dataBytes))
      const dec = execFileSync(
        'ffmpeg',
        ['-v', 'error', '-f', 's32le', '-ar', String(rate), '-ac', String(channels), '-i', raw, '-f', 'f32le', '-'],
        { maxBuffer: 1 << 28 },
      )
      expect(new Float32Array(dec.buffer.slice(dec.byteOffset, dec.byteOffset + dec.byteLength))).toEqual(
        interleave(back),
      )
    }
    // sox 14.4 reads RIFF and RF64 but not BW64 ("RIFF header not found") nor padded samples (observed).
    if (container !== 'BW64' && !ext) {
      const s = soxi(path)
      expect(s).toEqual({ rate, channels, samples: frames, bits: e.o.bitsPerSample, encoding: e.soxEncoding })
    }
  })

  it.each([1, 2, 3, 4, 5, 6, 7, 8])(
    '16-bit PCM with %i channels: channel order kept (ffmpeg decode)',
    async (channels) => {
      const rate = RATES[channels - 1]
      // Each channel carries its own constant, so a swapped or shifted channel cannot pass.
      const planar = Array.from({ length: channels }, (_, c) => new Float32Array(50).fill(((c + 1) * 1000) / 32768))
      const path = tmp.file(`ch-${channels}.wav`)
      await writeWav(path, planar, { sampleRate: rate, channels, encoding: 'pcm', bitsPerSample: 16 })
      const info = await probeWav(path)
      const back = await readAll(path, info)
      back.forEach((b, c) => expect(b).toEqual(planar[c]))
      expect(ffmpegF32(path)).toEqual(interleave(planar))
      expect(soxi(path)).toMatchObject({ rate, channels, samples: 50, bits: 16 })
    },
  )
})

describe('writer behaviour the round trip relies on', () => {
  it('streaming WavWriter in uneven blocks writes the same bytes as encodeWav (common practice: one layout for both paths)', async () => {
    const e = ENCODINGS[2]
    const { planar } = signal(e, 3, 40000, 5)
    const opts: WavWriteOptions = {
      ...e.o,
      sampleRate: 48000,
      channels: 3,
      info: { INAM: 'streamed' },
      cues: [{ id: 1, frame: 10, label: 'a' }],
    }
    const path = tmp.file('stream.wav')
    const w = await WavWriter.open(path, opts)
    for (const [a, b] of [
      [0, 0],
      [0, 1],
      [1, 17000],
      [17000, 17001],
      [17001, 40000],
    ])
      await w.write(planar.map((p) => p.subarray(a, b)))
    const res = await w.close()
    const bytes = readFileSync(path)
    expect(bytes.equals(encodeWav(planar, opts))).toBe(true)
    expect(res).toEqual({ frames: 40000, bytes: bytes.length })
  })

  it('PCM is clipped to its range, float is never clipped', async () => {
    const x = [Float32Array.from([1.5, -1.5, 1, -1, 0.99999, Number.NaN])]
    for (const bits of [8, 16, 24, 32] as const) {
      const path = tmp.file(`clip-${bits}.wav`)
      await writeWav(path, x, { sampleRate: 8000, channels: 1, encoding: 'pcm', bitsPerSample: bits })
      const info = await probeWav(path)
      const [y] = await readAll(path, info)
      const max = Math.fround(1 - 2 ** -(bits - 1))
      expect(Array.from(y.subarray(0, 4))).toEqual([max, -1, max, -1])
      expect(y[5]).toBe(0) // NaN written as silence (common practice)
    }
    const path = tmp.file('clip-float.wav')
    await writeWav(path, [Float32Array.from([1.5, -3, 100])], {
      sampleRate: 8000,
      channels: 1,
      encoding: 'float',
      bitsPerSample: 32,
    })
    const [y] = await readAll(path, await probeWav(path))
    expect(Array.from(y)).toEqual([1.5, -3, 100])
    expect(Array.from(ffmpegF32(path))).toEqual([1.5, -3, 100])
  })
})
