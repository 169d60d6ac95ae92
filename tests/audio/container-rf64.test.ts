// Files past 4 GiB without writing 4 GiB: the data is a hole in a sparse file
// (fs.truncate), headers carry 64-bit sizes per EBU Tech 3306 (RF64) / ITU-R BS.2088 (BW64):
// ds64 = riffSize u64, dataSize u64, sampleCount u64, tableLength u32, table of {id, u64 size}.
import { afterAll, describe, expect, it } from 'vitest'
import { open, truncate, writeFile } from 'node:fs/promises'
import { probeWav, readMetadata } from '../../server/audio/wav-reader'
import { applyPatches, finalPatches, planLayout, trailer, type WavWriteOptions } from '../../server/audio/wav-layout'
import { buildWav, ffprobe, fmtPayload, makeTmpDir, readAll } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

const GiB = 2 ** 30

/** Writes `buf` at `at` in `path` without touching the rest (holes stay holes). */
async function pwrite(path: string, at: number, buf: Buffer): Promise<void> {
  const fh = await open(path, 'r+')
  try {
    await fh.write(buf, 0, buf.length, at)
  } finally {
    await fh.close()
  }
}

describe('writer layout promoted from RIFF to RF64 past 4 GiB', () => {
  const opts: WavWriteOptions = {
    sampleRate: 48000,
    channels: 2,
    encoding: 'pcm',
    bitsPerSample: 16,
    info: { INAM: 'long coil take' },
  }
  const frames = Math.floor((5 * GiB) / 4) + 3 // > 4 GiB of 16-bit stereo

  it('renames JUNK to ds64, sets 32-bit sizes to 0xFFFFFFFF, and the reader finds data and trailing chunks beyond 4 GiB', async () => {
    const plan = planLayout(opts)
    const path = tmp.file('big.wav')
    const dataEnd = plan.dataOffset + frames * 4
    const tail = trailer(opts)
    await writeFile(path, plan.header)
    await truncate(path, dataEnd) // sparse: zeros in the hole
    // Last two frames carry known values so the read position past 4 GiB is checked.
    const last = Buffer.alloc(8)
    last.writeInt16LE(1234, 0)
    last.writeInt16LE(-4321, 2)
    last.writeInt16LE(32767, 4)
    last.writeInt16LE(-32768, 6)
    await pwrite(path, dataEnd - 8, last)
    await pwrite(path, dataEnd, tail) // frames*4 is even: no pad byte
    const fileSize = dataEnd + tail.length
    const patches = finalPatches(plan, opts, frames, fileSize)
    const head = Buffer.from(plan.header)
    applyPatches(
      head,
      patches.filter((p) => p.at + p.bytes.length <= head.length),
    )
    await pwrite(path, 0, head)

    expect(head.toString('latin1', 0, 4)).toBe('RF64')
    expect(head.readUInt32LE(4)).toBe(0xffffffff)
    expect(head.toString('latin1', 12, 16)).toBe('ds64')
    expect(head.readUInt32LE(16)).toBe(28)
    expect(Number(head.readBigUInt64LE(20))).toBe(fileSize - 8) // riffSize
    expect(Number(head.readBigUInt64LE(28))).toBe(frames * 4) // dataSize
    expect(Number(head.readBigUInt64LE(36))).toBe(frames) // sampleCount
    expect(head.readUInt32LE(44)).toBe(0) // table length
    expect(head.readUInt32LE(plan.dataSizeAt)).toBe(0xffffffff)

    const info = await probeWav(path)
    expect(info.format).toMatchObject({ container: 'RF64', frames, channels: 2, sampleRate: 48000, recovered: false })
    expect(info.dataBytes).toBe(frames * 4)
    expect(info.chunks.map((c) => c.id)).toEqual(['ds64', 'fmt ', 'data', 'LIST'])
    expect(info.chunks[3].offset).toBeGreaterThan(4 * GiB)
    const back = await readAll(path, info, { startFrame: frames - 2 })
    expect(Array.from(back[0])).toEqual([1234 / 32768, 32767 / 32768])
    expect(Array.from(back[1])).toEqual([-4321 / 32768, -1])
    expect((await readMetadata(path, info)).info).toEqual({ INAM: 'long coil take' })

    // ffprobe reads the same 64-bit sizes. (soxi reads RF64 too, but walks all 5 GiB of the
    // hole, ~50 s here, so the small RF64 files of container-roundtrip carry the sox check.)
    const st = ffprobe(path).streams[0]
    expect(st.duration_ts).toBe(frames)
  })

  it('stays RIFF up to a RIFF size of 0xFFFFFFFF and promotes one byte later (32-bit field limit)', () => {
    const plan = planLayout(opts)
    const at = (p: ReturnType<typeof finalPatches>, off: number) => p.find((x) => x.at === off)?.bytes
    const riff = finalPatches(plan, opts, 1000, 0xffffffff + 8)
    expect(at(riff, 4)?.readUInt32LE(0)).toBe(0xffffffff)
    expect(at(riff, 0)).toBeUndefined()
    const rf64 = finalPatches(plan, opts, 1000, 0xffffffff + 9)
    expect(at(rf64, 0)?.toString('latin1')).toBe('RF64')
  })
})

describe('reader on hand-built 64-bit headers (independent of our writer)', () => {
  function ds64(riffSize: number, dataSize: number, samples: number, table: [string, number][] = []): Buffer {
    const b = Buffer.alloc(28 + 12 * table.length)
    b.writeBigUInt64LE(BigInt(riffSize), 0)
    b.writeBigUInt64LE(BigInt(dataSize), 8)
    b.writeBigUInt64LE(BigInt(samples), 16)
    b.writeUInt32LE(table.length, 24)
    table.forEach(([id, size], i) => {
      b.write(id, 28 + 12 * i, 4, 'latin1')
      b.writeBigUInt64LE(BigInt(size), 32 + 12 * i)
    })
    return b
  }

  it.each(['RF64', 'BW64'])(
    '%s: data size from ds64, a >4 GiB non-data chunk sized from the ds64 table, then LIST/INFO',
    async (magic) => {
      const dataSize = 4 * GiB + 8 // 16-bit mono: 2^31 + 4 frames
      const freeSize = 4 * GiB + 2
      const head = buildWav(
        [
          { id: 'ds64', payload: ds64(0, dataSize, dataSize / 2, [['free', freeSize]]) },
          { id: 'fmt ', payload: fmtPayload({ channels: 1, rate: 8000, bits: 16 }) },
          { id: 'data', payload: Buffer.alloc(0), size: 0xffffffff },
        ],
        magic,
      )
      const path = tmp.file(`hand-${magic}.wav`)
      const freeAt = head.length + dataSize
      const info = Buffer.concat([
        Buffer.from('INFO'),
        Buffer.from('INAM'),
        Buffer.from([4, 0, 0, 0]),
        Buffer.from('abc\0'),
      ])
      const listChunk = Buffer.concat([Buffer.from('LIST'), Buffer.from([info.length, 0, 0, 0]), info])
      await writeFile(path, head)
      const freeHeader = Buffer.concat([Buffer.from('free'), Buffer.from([0xff, 0xff, 0xff, 0xff])])
      await pwrite(path, freeAt, freeHeader)
      await pwrite(path, freeAt + 8 + freeSize, listChunk)

      const probe = await probeWav(path)
      expect(probe.format).toMatchObject({ container: magic, frames: dataSize / 2, recovered: false })
      expect(probe.chunks.map((c) => [c.id, c.size])).toEqual([
        ['ds64', 40],
        ['fmt ', 16],
        ['data', dataSize],
        ['free', freeSize],
        ['LIST', info.length],
      ])
      expect((await readMetadata(path, probe)).info).toEqual({ INAM: 'abc' })
      expect(ffprobe(path).streams[0].duration_ts).toBe(dataSize / 2)
    },
  )

  it('RF64 whose ds64 data size is 0 (recorder stopped before patching) is recovered from the file length', async () => {
    const path = tmp.file('rf64-zero.wav')
    await writeFile(
      path,
      Buffer.concat([
        buildWav(
          [
            { id: 'ds64', payload: ds64(0, 0, 0) },
            { id: 'fmt ', payload: fmtPayload({ channels: 2, rate: 48000, bits: 24 }) },
            { id: 'data', payload: Buffer.alloc(0), size: 0xffffffff },
          ],
          'RF64',
        ),
        Buffer.alloc(6 * 100 + 5), // 100 frames and a torn partial frame
      ]),
    )
    const probe = await probeWav(path)
    expect(probe.format).toMatchObject({ container: 'RF64', frames: 100, recovered: true })
    expect(probe.dataBytes).toBe(600)
  })
})
