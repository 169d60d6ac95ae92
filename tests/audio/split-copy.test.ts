// Copies of ranges of a WAVE file (the split's writer), held against the source
// bytes and read back by Debian's ffprobe and soxi: RF64 (EBU Tech 3306) with
// its ds64 sizes rewritten, float with a fact chunk (RIFF/MCI: dwSampleLength),
// smpl loops and cue points shifted into the range (those outside left out).
import fs from 'node:fs'
import { afterAll, describe, expect, it } from 'vitest'
import { encodeWav } from '../../server/audio/wav-writer'
import { probeWav } from '../../server/audio/wav-reader'
import { runSplitCopyTask } from '../../server/instrument/split-copy'
import { prng } from '../../server/audio/synth'
import { ffprobe, makeTmpDir, soxi } from '../helpers/audio-files'

const tmp = makeTmpDir('strayfield-split-copy-')
afterAll(() => tmp.cleanup())
const r = prng(5)
const noise = (n: number) => new Float32Array(n).map(() => 0.5 * (2 * r() - 1))

const chunk = (file: string, id: string) => {
  const b = fs.readFileSync(file)
  return probeWav(file).then((info) => {
    const c = info.chunks.find((x) => x.id === id)
    return c ? b.subarray(c.offset, c.offset + c.size) : null
  })
}

describe('split copies', () => {
  it('keeps an RF64 file RF64, with ds64 sizes of the copy; ffprobe and soxi read its length', async () => {
    const src = tmp.file('wide.wav')
    fs.writeFileSync(
      src,
      encodeWav([noise(48000), noise(48000)], {
        sampleRate: 48000,
        channels: 2,
        encoding: 'pcm',
        bitsPerSample: 24,
        container: 'RF64',
      }),
    )
    const out = tmp.file('wide-part.wav')
    const [res] = await runSplitCopyTask({ path: src, ranges: [{ start: 1000, end: 25000 }], outPaths: [out] })
    const info = await probeWav(out)
    const srcInfo = await probeWav(src)
    expect(info.format.container).toBe('RF64')
    expect(info.format.frames).toBe(24000)
    const bytes = fs.readFileSync(out)
    expect(res.size).toBe(bytes.length)
    const ds64 = (await chunk(out, 'ds64'))!
    expect(Number(ds64.readBigUInt64LE(0))).toBe(bytes.length - 8) // RIFF size
    expect(Number(ds64.readBigUInt64LE(8))).toBe(24000 * 6) // data size
    expect(Number(ds64.readBigUInt64LE(16))).toBe(24000) // sample count
    const src24 = fs.readFileSync(src).subarray(srcInfo.dataOffset + 1000 * 6, srcInfo.dataOffset + 25000 * 6)
    expect(bytes.subarray(info.dataOffset, info.dataOffset + info.dataBytes).equals(src24)).toBe(true)
    expect(Number(ffprobe(out).format.duration)).toBeCloseTo(0.5, 4)
    expect(soxi(out).samples).toBe(24000)
  })

  it('rewrites fact for float, shifts smpl loops and cue points into the range and leaves out the others', async () => {
    const src = tmp.file('float.wav')
    fs.writeFileSync(
      src,
      encodeWav([noise(20000)], {
        sampleRate: 8000,
        channels: 1,
        encoding: 'float',
        bitsPerSample: 32,
        loops: [
          { start: 100, end: 900 },
          { start: 6000, end: 6999 },
        ],
        cues: [
          { id: 1, frame: 50, label: 'before' },
          { id: 2, frame: 7000, label: 'inside' },
        ],
      }),
    )
    const out = tmp.file('float-part.wav')
    await runSplitCopyTask({ path: src, ranges: [{ start: 5000, end: 15000 }], outPaths: [out] })
    const info = await probeWav(out)
    expect(info.format).toMatchObject({ encoding: 'float', bitsPerSample: 32, frames: 10000 })
    const fact = await chunk(out, 'fact')
    if (fact) expect(fact.readUInt32LE(0)).toBe(10000)
    const smpl = (await chunk(out, 'smpl'))!
    expect(smpl.readUInt32LE(28)).toBe(1)
    expect([smpl.readUInt32LE(36 + 8), smpl.readUInt32LE(36 + 12)]).toEqual([1000, 1999])
    const cue = (await chunk(out, 'cue '))!
    expect(cue.readUInt32LE(0)).toBe(1)
    expect([cue.readUInt32LE(4), cue.readUInt32LE(4 + 20)]).toEqual([2, 2000])
    expect(soxi(out)).toMatchObject({ rate: 8000, samples: 10000, encoding: 'Floating Point PCM' })
  })

  it('writes every copy or none: a range past the end leaves no file', async () => {
    const src = tmp.file('short.wav')
    fs.writeFileSync(
      src,
      encodeWav([noise(1000)], { sampleRate: 8000, channels: 1, encoding: 'pcm', bitsPerSample: 16 }),
    )
    const outs = [tmp.file('a.wav'), tmp.file('b.wav')]
    await expect(
      runSplitCopyTask({
        path: src,
        ranges: [
          { start: 0, end: 500 },
          { start: 500, end: 5000 },
        ],
        outPaths: outs,
      }),
    ).rejects.toThrow()
    for (const f of outs) expect(fs.existsSync(f)).toBe(false)
  })
})
