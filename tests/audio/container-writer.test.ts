// Streaming writer: temp file + rename, abort, bext patched on close, TPDF dither,
// option checks; readFrames ranges and decode speed.
import { afterAll, describe, expect, it } from 'vitest'
import { existsSync, readFileSync } from 'node:fs'
import { probeWav, readFrames, readMetadata } from '../../server/audio/wav-reader'
import { encodeWav, WavWriter, writeWav } from '../../server/audio/wav-writer'
import { whiteNoise } from '../../server/audio/synth'
import { ffprobe, makeTmpDir, readAll } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

const mono16 = { sampleRate: 48000, channels: 1, encoding: 'pcm', bitsPerSample: 16 } as const

describe('temp file and rename', () => {
  it('nothing exists under the final name until close; then only the final file remains', async () => {
    const path = tmp.file('take.wav')
    const w = await WavWriter.open(path, mono16)
    await w.write([new Float32Array(1000)])
    expect(existsSync(path)).toBe(false)
    expect(tmp.list().filter((f) => f.endsWith('.part'))).toHaveLength(1)
    await w.close()
    expect(existsSync(path)).toBe(true)
    expect(tmp.list().filter((f) => f.includes('take.wav'))).toEqual(['take.wav'])
    await expect(w.write([new Float32Array(1)])).rejects.toThrow(/closed/)
  })

  it('abort deletes the partial file and leaves an existing take under the final name untouched', async () => {
    const path = tmp.file('keep.wav')
    await writeWav(path, [Float32Array.from([0.5])], mono16)
    const before = readFileSync(path)
    const w = await WavWriter.open(path, mono16)
    await w.write([new Float32Array(5000)])
    await w.abort()
    expect(readFileSync(path).equals(before)).toBe(true)
    expect(tmp.list().filter((f) => f.includes('keep.wav'))).toEqual(['keep.wav'])
  })

  it('writes that are not awaited are still stored in call order', async () => {
    const path = tmp.file('order.wav')
    const w = await WavWriter.open(path, mono16)
    const parts = [0.1, 0.2, 0.3].map((v) => w.write([new Float32Array(20000).fill(v)]))
    await Promise.all(parts)
    await w.close()
    const [x] = await readAll(path, await probeWav(path))
    expect([x[0], x[20000], x[40000], x.length]).toEqual([3277, 6554, 9830].map((k) => k / 32768).concat(60000))
  })

  it('rejects channel arrays of the wrong count or unequal length, and options the reader would refuse', async () => {
    const w = await WavWriter.open(tmp.file('bad.wav'), { ...mono16, channels: 2 })
    await expect(w.write([new Float32Array(3)])).rejects.toThrow(RangeError)
    await expect(w.write([new Float32Array(3), new Float32Array(4)])).rejects.toThrow(RangeError)
    await w.abort()
    expect(() => encodeWav([new Float32Array(1)], { ...mono16, sampleRate: 4000 })).toThrow(RangeError)
    expect(() => encodeWav([new Float32Array(1)], { ...mono16, encoding: 'float', bitsPerSample: 24 })).toThrow(
      /24-bit float/,
    )
    expect(() => encodeWav([new Float32Array(1)], { ...mono16, bitsPerSample: 64 })).toThrow(RangeError)
    expect(() => encodeWav([new Float32Array(1)], { ...mono16, validBitsPerSample: 20 })).toThrow(RangeError)
  })
})

describe('bext reserved before data and patched on close', () => {
  it('loudness measured during the render is written by updateBext; ffprobe sees the final description', async () => {
    const path = tmp.file('bext-late.wav')
    const w = await WavWriter.open(path, {
      ...mono16,
      bext: { description: 'rendering', codingHistory: 'A=PCM,F=48000,W=16,M=mono\r\n' },
    })
    await w.write(whiteNoise({ seconds: 0.5, sampleRate: 48000 }))
    w.updateBext({
      description: 'coil hum, rendered',
      loudnessValue: -23.05,
      loudnessRange: 4.2,
      maxTruePeakLevel: -1,
      maxMomentaryLoudness: null,
      codingHistory: 'A=PCM,F=48000,W=16,M=mono,T=render\r\n',
    })
    await w.close()
    const info = await probeWav(path)
    const bextChunk = info.chunks.find((c) => c.id === 'bext')
    expect(bextChunk!.offset).toBeLessThan(info.dataOffset)
    const { bext } = await readMetadata(path, info)
    expect(bext).toMatchObject({
      description: 'coil hum, rendered',
      version: 2,
      loudnessValue: -23.05,
      loudnessRange: 4.2,
      maxTruePeakLevel: -1,
      maxMomentaryLoudness: null,
      maxShortTermLoudness: null,
      codingHistory: 'A=PCM,F=48000,W=16,M=mono,T=render\r\n',
    })
    // ffmpeg maps bext Description to the "comment" tag (libavformat wav demuxer).
    expect(ffprobe(path).format.tags?.comment).toBe('coil hum, rendered')
  })

  it('updateBext without a reserved bext, or with a coding history longer than the reserve, throws', async () => {
    const w = await WavWriter.open(tmp.file('nobext.wav'), mono16)
    expect(() => w.updateBext({ description: 'x' })).toThrow(/no bext reserved/)
    await w.abort()
    const w2 = await WavWriter.open(tmp.file('shortbext.wav'), { ...mono16, bext: {} })
    expect(() => w2.updateBext({ codingHistory: 'x'.repeat(5000) })).toThrow(RangeError)
    await w2.abort()
  })
})

describe('TPDF dither', () => {
  // Reference: TPDF dither of ±1 LSB makes the mean of the quantised output equal the input
  // and the total error power 1/4 LSB² (1/6 from the triangular dither + 1/12 from rounding);
  // from memory of the dither literature, common practice in mastering tools.
  const n = 200_000
  const lsb = 1 / 32768
  const input = 0.3 * lsb

  it('undithered, a 0.3 LSB constant is lost; dithered, its mean survives and the error power is ~1/4 LSB²', async () => {
    const plain = tmp.file('nodither.wav')
    const dith = tmp.file('dither.wav')
    const x = [new Float32Array(n).fill(input)]
    await writeWav(plain, x, mono16)
    await writeWav(dith, x, { ...mono16, dither: 'tpdf' })
    const [p] = await readAll(plain, await probeWav(plain))
    expect(p.every((v) => v === 0)).toBe(true)
    const [d] = await readAll(dith, await probeWav(dith))
    let sum = 0,
      err2 = 0,
      maxErr = 0
    for (const v of d) {
      sum += v
      err2 += ((v - input) / lsb) ** 2
      maxErr = Math.max(maxErr, Math.abs(v - input) / lsb)
    }
    expect(sum / n / lsb).toBeCloseTo(0.3, 1)
    expect(err2 / n).toBeGreaterThan(0.23)
    expect(err2 / n).toBeLessThan(0.27)
    expect(maxErr).toBeLessThanOrEqual(1.5) // round(x ± 1 LSB) is at most 1.5 LSB away
  })

  it('is deterministic per seed and never touches float output', () => {
    const x = whiteNoise({ seconds: 0.1, sampleRate: 48000, levelDbfs: -60 })
    const a = encodeWav(x, { ...mono16, dither: 'tpdf' })
    expect(a.equals(encodeWav(x, { ...mono16, dither: 'tpdf' }))).toBe(true)
    expect(a.equals(encodeWav(x, { ...mono16, dither: 'tpdf', ditherSeed: 99 }))).toBe(false)
    const f = { ...mono16, encoding: 'float', bitsPerSample: 32 } as const
    expect(encodeWav(x, { ...f, dither: 'tpdf' }).equals(encodeWav(x, f))).toBe(true)
  })
})

describe('readFrames ranges and speed', () => {
  const path = tmp.file('range.wav')
  const ramp = Float32Array.from({ length: 10_000 }, (_, i) => (i - 5000) / 32768)

  it('startFrame/endFrame select frames, out-of-range values are clamped, blocks have the asked size', async () => {
    await writeWav(path, [ramp], mono16)
    const info = await probeWav(path)
    const mid = await readAll(path, info, { startFrame: 1234, endFrame: 4321, blockFrames: 1000 })
    expect(Array.from(mid[0])).toEqual(Array.from(ramp.subarray(1234, 4321)))
    const sizes: number[] = []
    for await (const b of readFrames(path, info, { startFrame: -5, endFrame: 1e9, blockFrames: 4096 }))
      sizes.push(b[0].length)
    expect(sizes).toEqual([4096, 4096, 1808])
    const none: unknown[] = []
    for await (const b of readFrames(path, info, { startFrame: 9000, endFrame: 100 })) none.push(b)
    expect(none).toEqual([])
  })

  it('decodes 48 kHz 24-bit stereo far faster than realtime (target > 200x; asserted > 100x to allow a loaded CI box)', async () => {
    const big = tmp.file('speed.wav')
    const seconds = 60
    const w = await WavWriter.open(big, { sampleRate: 48000, channels: 2, encoding: 'pcm', bitsPerSample: 24 })
    const block = whiteNoise({ seconds: 10, sampleRate: 48000, channels: 2 })
    for (let i = 0; i < seconds / 10; i++) await w.write(block)
    await w.close()
    const info = await probeWav(big)
    const t0 = performance.now()
    let frames = 0
    for await (const b of readFrames(big, info)) frames += b[0].length
    const ms = performance.now() - t0
    expect(frames).toBe(seconds * 48000)
    expect((seconds * 1000) / ms).toBeGreaterThan(100)
  })
})

describe('writeInts (integers already on the grid)', () => {
  // The render path hands the writer integers; the bytes must equal those of the float path
  // given the same samples k / 2^(bits−1), and the reader must give the samples back.
  for (const [bits, channels, frames] of [
    [24, 2, 70001],
    [24, 1, 999],
    [24, 3, 4097],
    [16, 2, 70001],
    [16, 1, 5],
  ] as const) {
    it(`${bits}-bit, ${channels} channel(s), ${frames} frames: the same file as write()`, async () => {
      const scale = 2 ** (bits - 1)
      let s = 12345
      const ints = Array.from({ length: channels }, () => {
        const a = new Int32Array(frames)
        for (let i = 0; i < frames; i++) {
          s = (Math.imul(s, 1103515245) + 12345) >>> 0
          a[i] = (s % (2 * scale)) - scale // the full range, extremes included
        }
        a[0] = -scale
        a[frames - 1] = scale - 1
        return a
      })
      const floats = ints.map((a) => Float32Array.from(a, (v) => v / scale))
      const opts = { sampleRate: 48000, channels, encoding: 'pcm', bitsPerSample: bits } as const
      const a = tmp.file(`ints-${bits}-${channels}.wav`)
      const w = await WavWriter.open(a, opts)
      await w.writeInts(ints, frames)
      await w.close()
      const b = tmp.file(`floats-${bits}-${channels}.wav`)
      await writeWav(b, floats, opts)
      expect(readFileSync(a).equals(readFileSync(b))).toBe(true)
      const back = await readAll(a, await probeWav(a))
      for (let c = 0; c < channels; c++)
        expect(Array.from(back[c].subarray(0, 50))).toEqual(Array.from(floats[c].subarray(0, 50)))
    })
  }

  it("refuses float output and the writer's own dither", async () => {
    const f = await WavWriter.open(tmp.file('f.wav'), {
      sampleRate: 48000,
      channels: 1,
      encoding: 'float',
      bitsPerSample: 32,
    })
    await expect(f.writeInts([new Int32Array(4)], 4)).rejects.toThrow(/16- or 24-bit PCM/)
    await f.abort()
    const d = await WavWriter.open(tmp.file('d.wav'), { ...mono16, dither: 'tpdf' })
    await expect(d.writeInts([new Int32Array(4)], 4)).rejects.toThrow(/dither/)
    await d.abort()
  })
})
