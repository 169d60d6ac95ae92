// Property tests: damaged headers must give a WavFormatError or a consistent result,
// never another exception (TypeError, RangeError...) and never a hang. Mutations target
// what real damage looks like: sizes, chunk ids, format tags, bits, channels, truncation at
// every position, random bytes. Run counts are kept moderate (< 60 s on 2 cores).
import { afterAll, describe, expect, it } from 'vitest'
import fc from 'fast-check'
import { writeFileSync } from 'node:fs'
import { FileMetadata } from '@shared/schemas/analysis'
import { probeWav, readFrames, readMetadata, WavFormatError } from '../../server/audio/wav-reader'
import { encodeWav, writeWav, type WavWriteOptions } from '../../server/audio/wav-writer'
import { mainsHum } from '../../server/audio/synth'
import { makeTmpDir } from '../helpers/audio-files'

const tmp = makeTmpDir('strayfield-fuzz-')
afterAll(() => {
  // Neither the reader nor an aborted writer may leave temp files behind.
  expect(tmp.list().filter((f) => f.endsWith('.part'))).toEqual([])
  tmp.cleanup()
})

const sig = (ch: number, frames: number) => mainsHum({ hz: 50, seconds: frames / 8000, sampleRate: 8000, channels: ch })
const meta: Partial<WavWriteOptions> = {
  bext: { description: 'fuzz', loudnessValue: -20, codingHistory: 'A=PCM\r\n' },
  ixml: '<BWFXML><PROJECT>p</PROJECT><NOTE>n &amp; m</NOTE></BWFXML>',
  info: { INAM: 'fuzz', ICMT: 'é' },
  cues: [
    { id: 1, frame: 3, label: 'c' },
    { id: 2, frame: 9 },
  ],
  loops: [{ start: 1, end: 20 }],
}
/** Valid seeds covering RIFF, RF64, BW64, PCM widths, float, extensible, odd data and every metadata chunk. */
const SEEDS: Buffer[] = [
  encodeWav(sig(2, 40), { sampleRate: 8000, channels: 2, encoding: 'pcm', bitsPerSample: 16, ...meta }),
  encodeWav(sig(1, 33), {
    sampleRate: 8000,
    channels: 1,
    encoding: 'pcm',
    bitsPerSample: 8,
    info: meta.info,
    cues: meta.cues,
  }),
  encodeWav(sig(3, 21), {
    sampleRate: 8000,
    channels: 3,
    encoding: 'pcm',
    bitsPerSample: 24,
    container: 'RF64',
    ixml: meta.ixml,
    loops: meta.loops,
  }),
  encodeWav(sig(2, 16), {
    sampleRate: 8000,
    channels: 2,
    encoding: 'float',
    bitsPerSample: 32,
    container: 'BW64',
    bext: meta.bext,
  }),
  encodeWav(sig(2, 16), {
    sampleRate: 8000,
    channels: 2,
    encoding: 'pcm',
    bitsPerSample: 32,
    validBitsPerSample: 24,
    channelMask: 3,
  }),
  encodeWav(sig(1, 10), { sampleRate: 8000, channels: 1, encoding: 'float', bitsPerSample: 64, info: meta.info }),
]

const IDS = [
  'RIFF',
  'RF64',
  'BW64',
  'WAVE',
  'fmt ',
  'data',
  'ds64',
  'JUNK',
  'LIST',
  'INFO',
  'adtl',
  'labl',
  'note',
  'bext',
  'iXML',
  'cue ',
  'smpl',
  'fact',
  '\0\0\0\0',
]
const U32 = [0, 1, 2, 3, 4, 15, 16, 17, 18, 40, 0x7fff, 0xffff, 0x7fffffff, 0x80000000, 0xfffffffe, 0xffffffff]
const U16 = [0, 1, 2, 3, 8, 9, 12, 16, 20, 24, 32, 64, 0x55, 0xfffe, 0xffff]

type Mutation =
  | { kind: 'u32'; at: number; v: number }
  | { kind: 'u16'; at: number; v: number }
  | { kind: 'id'; at: number; id: string }
  | { kind: 'bytes'; at: number; bytes: number[] }
  | { kind: 'truncate'; at: number }

/** Positions as fractions so one arbitrary serves every seed; even offsets are favoured (chunk fields are aligned). */
const pos = fc.oneof(
  fc.double({ min: 0, max: 1, noNaN: true }),
  fc.integer({ min: 0, max: 96 }).map((i) => -(i * 2 + 1)),
)
const mutation: fc.Arbitrary<{ kind: Mutation['kind']; p: number; v?: number; id?: string; bytes?: number[] }> =
  fc.oneof(
    fc.record({ kind: fc.constant('u32' as const), p: pos, v: fc.oneof(fc.constantFrom(...U32), fc.nat()) }),
    fc.record({
      kind: fc.constant('u16' as const),
      p: pos,
      v: fc.oneof(fc.constantFrom(...U16), fc.integer({ min: 0, max: 0xffff })),
    }),
    fc.record({
      kind: fc.constant('id' as const),
      p: pos,
      id: fc.oneof(fc.constantFrom(...IDS), fc.string({ minLength: 4, maxLength: 4 })),
    }),
    fc.record({
      kind: fc.constant('bytes' as const),
      p: pos,
      bytes: fc.array(fc.integer({ min: 0, max: 255 }), { minLength: 1, maxLength: 16 }),
    }),
    fc.record({ kind: fc.constant('truncate' as const), p: pos }),
  )

function place(p: number, len: number): number {
  // negative p: an early header offset (2|p|-ish), else a fraction of the file
  return p < 0 ? Math.min(len - 1, -p - 1) : Math.min(len - 1, Math.floor(p * len))
}

function mutate(
  seed: Buffer,
  ms: { kind: Mutation['kind']; p: number; v?: number; id?: string; bytes?: number[] }[],
): Buffer {
  let b = Buffer.from(seed)
  for (const m of ms) {
    if (b.length === 0) break
    const at = place(m.p, b.length)
    if (m.kind === 'truncate') b = b.subarray(0, at)
    else if (m.kind === 'u32' && at + 4 <= b.length) b.writeUInt32LE(m.v! >>> 0, at)
    else if (m.kind === 'u16' && at + 2 <= b.length) b.writeUInt16LE(m.v! & 0xffff, at)
    else if (m.kind === 'id') b.write(m.id!, at, 4, 'latin1')
    else if (m.kind === 'bytes')
      m.bytes!.forEach((x, i) => {
        if (at + i < b.length) b[at + i] = x
      })
  }
  return b
}

/** The contract: WavFormatError or a self-consistent result. Anything else fails the property. */
async function checkFile(path: string, size: number): Promise<void> {
  let info
  try {
    info = await probeWav(path)
  } catch (e) {
    if (e instanceof WavFormatError) return
    throw e
  }
  const f = info.format
  expect(info.dataBytes).toBe(f.frames * info.blockAlign)
  expect(info.dataOffset + info.dataBytes).toBeLessThanOrEqual(size)
  expect(info.fileSize).toBe(size)
  let frames = 0
  for await (const block of readFrames(path, info, { blockFrames: 7 })) {
    expect(block).toHaveLength(f.channels)
    frames += block[0].length
    if (f.encoding === 'pcm')
      for (const ch of block)
        for (const v of ch) if (!(v >= -1 && v < 1)) throw new Error(`PCM value ${v} outside -1..1`)
  }
  expect(frames).toBe(f.frames)
  FileMetadata.parse(await readMetadata(path, info))
}

describe('fuzzed headers', () => {
  const path = tmp.file('fuzz.wav')

  it('random mutations (sizes, ids, tags, bits, channels, bytes, truncation) give WavFormatError or a consistent result', async () => {
    await fc.assert(
      fc.asyncProperty(
        fc.integer({ min: 0, max: SEEDS.length - 1 }),
        fc.array(mutation, { minLength: 1, maxLength: 4 }),
        async (si, ms) => {
          const bytes = mutate(SEEDS[si], ms)
          writeFileSync(path, bytes)
          await checkFile(path, bytes.length)
        },
      ),
      { numRuns: 500, timeout: 5000, seed: 20240506 },
    )
  })

  it('truncation at every byte position of two seeds', async () => {
    for (const seed of [SEEDS[0], SEEDS[2]]) {
      for (let at = 0; at <= seed.length; at++) {
        writeFileSync(path, seed.subarray(0, at))
        await checkFile(path, at)
      }
    }
  })

  it('random bytes after a valid RIFF/WAVE/fmt prefix, and wholly random files', async () => {
    const prefix = SEEDS[0].subarray(0, 56 + 16) // RIFF header, JUNK, fmt
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 600 }), fc.boolean(), async (tail, withPrefix) => {
        const bytes = withPrefix ? Buffer.concat([prefix, tail]) : Buffer.from(tail)
        writeFileSync(path, bytes)
        await checkFile(path, bytes.length)
      }),
      { numRuns: 300, timeout: 5000, seed: 7 },
    )
  })
})

describe('writer options', () => {
  it('any valid option set round-trips its format; invalid ones throw RangeError and leave no temp file', async () => {
    const opts = fc.record({
      sampleRate: fc.oneof(fc.constantFrom(8000, 44100, 48000, 96000, 384000), fc.integer({ min: 1000, max: 500000 })),
      channels: fc.integer({ min: 0, max: 10 }),
      enc: fc.constantFrom(
        ['pcm', 8],
        ['pcm', 16],
        ['pcm', 24],
        ['pcm', 32],
        ['float', 32],
        ['float', 64],
        ['float', 24],
        ['pcm', 64],
      ),
      container: fc.constantFrom('RIFF', 'RF64', 'BW64'),
      frames: fc.integer({ min: 0, max: 50 }),
    })
    let i = 0
    await fc.assert(
      fc.asyncProperty(opts, async (o) => {
        const [encoding, bits] = o.enc as ['pcm' | 'float', 8 | 16 | 24 | 32 | 64]
        const wo: WavWriteOptions = {
          sampleRate: o.sampleRate,
          channels: o.channels,
          encoding,
          bitsPerSample: bits,
          container: o.container as WavWriteOptions['container'],
        }
        const valid =
          o.sampleRate >= 8000 &&
          o.sampleRate <= 384000 &&
          o.channels >= 1 &&
          o.channels <= 8 &&
          (encoding === 'float' ? bits === 32 || bits === 64 : bits <= 32)
        const p = tmp.file(`w${i++}.wav`)
        const planar = Array.from({ length: Math.max(0, o.channels) }, () => new Float32Array(o.frames))
        if (!valid) {
          await expect(writeWav(p, planar, wo)).rejects.toThrow(RangeError)
          return
        }
        await writeWav(p, planar, wo)
        const info = await probeWav(p)
        expect(info.format).toMatchObject({
          container: o.container,
          encoding,
          bitsPerSample: bits,
          sampleRate: o.sampleRate,
          channels: o.channels,
          frames: o.frames,
        })
      }),
      { numRuns: 80, seed: 11 },
    )
  })
})
