// bext per EBU Tech 3285 (v0 1997, v1 2001 adds UMID, v2 2011 adds loudness).
// Offsets in this file are typed from the Tech 3285 structure table on purpose (not
// imported from the code under test):
//   0 Description[256]  256 Originator[32]  288 OriginatorReference[32]
//   320 OriginationDate[10]  330 OriginationTime[8]  338 TimeReferenceLow u32
//   342 TimeReferenceHigh u32  346 Version u16  348 UMID[64]
//   412 LoudnessValue i16  414 LoudnessRange i16  416 MaxTruePeakLevel i16
//   418 MaxMomentaryLoudness i16  420 MaxShortTermLoudness i16  422 Reserved[180]
//   602 CodingHistory (to the end of the chunk)
// Loudness fields hold value x100; 0x7FFF marks a field that was not measured (Tech 3285 v2).
import { afterAll, describe, expect, it } from 'vitest'
import { writeFileSync } from 'node:fs'
import { parseFile } from 'music-metadata'
import { probeWav, readMetadata } from '../../server/audio/wav-reader'
import { encodeBext, parseBext } from '../../server/audio/wav-chunks'
import { writeWav } from '../../server/audio/wav-writer'
import { buildWav, ffprobe, fmtPayload, makeTmpDir, pcm16 } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

const UMID = '060a2b340101010501010d4313000000' + 'aabbccddeeff00112233445566778899' // 32-byte basic UMID
const full = {
  description: 'Coil over a switch-mode supply, bench 2',
  originator: 'field unit 7',
  originatorReference: 'SFREF000123',
  originationDate: '2024-05-06',
  originationTime: '12:34:56',
  timeReference: 2 ** 32 * 3 + 17, // needs TimeReferenceHigh
  umid: UMID,
  loudnessValue: -23.45,
  loudnessRange: 5.5,
  maxTruePeakLevel: -1.2,
  maxMomentaryLoudness: -18,
  maxShortTermLoudness: null,
  codingHistory: 'A=PCM,F=48000,W=24,M=mono,T=coil\r\n',
}

/** A bext payload built field by field from the Tech 3285 table. */
function handBext(version: number, opts: { umid?: Buffer; loud?: number[]; history?: string } = {}): Buffer {
  const b = Buffer.alloc(602 + (opts.history?.length ?? 0))
  b.write('desc', 0, 'latin1')
  b.write('orig', 256, 'latin1')
  b.write('ref', 288, 'latin1')
  b.write('1999-12-31', 320, 'latin1')
  b.write('23:59:59', 330, 'latin1')
  b.writeUInt32LE(48000, 338)
  b.writeUInt32LE(1, 342)
  b.writeUInt16LE(version, 346)
  opts.umid?.copy(b, 348)
  opts.loud?.forEach((v, i) => b.writeInt16LE(v, 412 + 2 * i))
  if (opts.history) b.write(opts.history, 602, 'latin1')
  return b
}

describe('encodeBext layout, byte by byte against Tech 3285', () => {
  const b = encodeBext(full)
  const str = (at: number, len: number) => b.subarray(at, at + len)
  const padded = (s: string, len: number) => Buffer.concat([Buffer.from(s, 'latin1'), Buffer.alloc(len - s.length)])

  it('text fields sit at their offsets, NUL padded to their widths', () => {
    expect(str(0, 256)).toEqual(padded(full.description, 256))
    expect(str(256, 32)).toEqual(padded(full.originator, 32))
    expect(str(288, 32)).toEqual(padded(full.originatorReference, 32))
    expect(str(320, 10).toString('latin1')).toBe('2024-05-06')
    expect(str(330, 8).toString('latin1')).toBe('12:34:56')
  })

  it('time reference split low/high, version 2, UMID, loudness x100 as int16 with 0x7FFF unused, reserved zero, coding history', () => {
    expect(b.readUInt32LE(338)).toBe(17)
    expect(b.readUInt32LE(342)).toBe(3)
    expect(b.readUInt16LE(346)).toBe(2)
    expect(str(348, 64)).toEqual(Buffer.concat([Buffer.from(UMID, 'hex'), Buffer.alloc(32)]))
    expect([412, 414, 416, 418, 420].map((o) => b.readInt16LE(o))).toEqual([-2345, 550, -120, -1800, 0x7fff])
    expect(str(422, 180).every((x) => x === 0)).toBe(true)
    expect(b.toString('latin1', 602).replace(/\0+$/, '')).toBe(full.codingHistory)
  })

  it('over-long text is cut to its field; characters outside Latin-1 become "?"', () => {
    const c = encodeBext({ originator: 'x'.repeat(40), description: 'coil \u2192 amp' })
    expect(c.toString('latin1', 256, 288)).toBe('x'.repeat(32))
    expect(c.readUInt8(288)).toBe(0)
    expect(parseBext(c).description).toBe('coil ? amp')
  })
})

describe('parseBext of hand-built v0, v1 and v2 chunks', () => {
  const umid = Buffer.concat([Buffer.from('0102', 'hex'), Buffer.alloc(10), Buffer.from('ff', 'hex')])
  const loud = [-2300, 700, -100, -1500, 0x7fff]

  it('v0: UMID and loudness areas are reserved, so they read as "" and null even when not zero', () => {
    const r = parseBext(handBext(0, { umid, loud, history: 'A=PCM\r\n' }))
    expect(r).toEqual({
      description: 'desc',
      originator: 'orig',
      originatorReference: 'ref',
      originationDate: '1999-12-31',
      originationTime: '23:59:59',
      timeReference: 2 ** 32 + 48000,
      version: 0,
      umid: '',
      loudnessValue: null,
      loudnessRange: null,
      maxTruePeakLevel: null,
      maxMomentaryLoudness: null,
      maxShortTermLoudness: null,
      codingHistory: 'A=PCM\r\n',
    })
  })

  it('v1: UMID in hex with trailing zero bytes removed (zeros inside kept); loudness still null', () => {
    const r = parseBext(handBext(1, { umid, loud }))
    expect(r.umid).toBe('0102' + '00'.repeat(10) + 'ff')
    expect([
      r.loudnessValue,
      r.loudnessRange,
      r.maxTruePeakLevel,
      r.maxMomentaryLoudness,
      r.maxShortTermLoudness,
    ]).toEqual([null, null, null, null, null])
    expect(parseBext(handBext(1)).umid).toBe('')
  })

  it('v2: loudness int16 / 100, 0x7FFF -> null', () => {
    const r = parseBext(handBext(2, { loud }))
    expect([
      r.loudnessValue,
      r.loudnessRange,
      r.maxTruePeakLevel,
      r.maxMomentaryLoudness,
      r.maxShortTermLoudness,
    ]).toEqual([-23, 7, -1, -15, null])
  })

  it('strings stop at their NUL and lose trailing spaces; a field filling its width has no NUL at all', () => {
    const b = handBext(2)
    b.write('x'.repeat(256), 0, 'latin1')
    b.write('orig   \0junk', 256, 'latin1')
    const r = parseBext(b)
    expect(r.description).toBe('x'.repeat(256))
    expect(r.originator).toBe('orig')
  })

  it('a chunk shorter than 602 bytes (old writers) reads as if zero filled', () => {
    const r = parseBext(handBext(0).subarray(0, 338))
    expect(r).toMatchObject({
      description: 'desc',
      originationTime: '23:59:59',
      timeReference: 0,
      version: 0,
      codingHistory: '',
    })
  })
})

describe('bext in a file: our reader, ffprobe and music-metadata', () => {
  const path = tmp.file('bext.wav')

  it('round trip through the writer and readMetadata', async () => {
    await writeWav(path, [new Float32Array(480)], {
      sampleRate: 48000,
      channels: 1,
      encoding: 'pcm',
      bitsPerSample: 24,
      bext: full,
    })
    const { bext } = await readMetadata(path, await probeWav(path))
    expect(bext).toEqual({ ...full, version: 2 })
  })

  it('ffprobe -show_format reads the same fields (ffmpeg 5.1 names: description->comment, originator->encoded_by, origination_date->date, origination_time->creation_time)', () => {
    const tags = ffprobe(path).format.tags ?? {}
    expect(tags.comment).toBe(full.description)
    expect(tags.encoded_by).toBe(full.originator)
    expect(tags.originator_reference).toBe(full.originatorReference)
    expect(tags.date).toBe(full.originationDate)
    expect(tags.creation_time).toBe(full.originationTime)
    expect(tags.time_reference).toBe(String(full.timeReference))
    expect(tags.coding_history).toBe(full.codingHistory)
    // ffmpeg prints "0x" + 32 or 64 UMID bytes in upper case; ours drops trailing zero bytes.
    expect(
      tags.umid
        .slice(2)
        .toLowerCase()
        .replace(/(00)+$/, ''),
    ).toBe(UMID)
  })

  it('music-metadata 11 reads the text fields like we do but not the v2 loudness fields', async () => {
    // Found: music-metadata's bext token reads 412..418 as UINT16 without the x100 scaling, and
    // shifts the names: it calls LoudnessRange (414) "maxTruePeakLevel", MaxTruePeakLevel (416)
    // "maxMomentaryLoudness", MaxMomentaryLoudness (418) "maxShortTermLoudness", and never reads
    // 420 (MaxShortTermLoudness). Per Tech 3285 our reader wins; the product uses only ours.
    const mm = await parseFile(path, { skipCovers: true, duration: false })
    const ex = Object.fromEntries((mm.native.exif ?? []).map((t) => [t.id, t.value])) as Record<string, number | string>
    expect(ex['bext.description']).toBe(full.description)
    expect(ex['bext.originator']).toBe(full.originator)
    expect(Number(ex['bext.timeReferenceLow']) + Number(ex['bext.timeReferenceHigh']) * 2 ** 32).toBe(
      full.timeReference,
    )
    const u16 = (v: number) => (Math.round(v * 100) + 65536) % 65536
    expect(ex['bext.loudnessValue']).toBe(u16(full.loudnessValue)) // unsigned: -2345 comes back as 63191
    expect(ex['bext.maxTruePeakLevel']).toBe(u16(full.loudnessRange))
    expect(ex['bext.maxMomentaryLoudness']).toBe(u16(full.maxTruePeakLevel))
    expect(ex['bext.maxShortTermLoudness']).toBe(u16(full.maxMomentaryLoudness))
  })

  it('a hand-built v1 file: ffprobe shows the UMID, our reader agrees, loudness null', async () => {
    const umid = Buffer.from('060a2b3401010105010101' + '2013'.repeat(10), 'hex')
    const p = tmp.file('bext-v1.wav')
    writeFileSync(
      p,
      buildWav([
        { id: 'bext', payload: handBext(1, { umid, history: 'A=PCM,F=8000\r\n' }) },
        { id: 'fmt ', payload: fmtPayload({ channels: 1, rate: 8000, bits: 16 }) },
        { id: 'data', payload: pcm16([1, 2]) },
      ]),
    )
    const { bext } = await readMetadata(p, await probeWav(p))
    const tags = ffprobe(p).format.tags ?? {}
    expect(bext).toMatchObject({
      version: 1,
      umid: umid.toString('hex'),
      loudnessValue: null,
      codingHistory: 'A=PCM,F=8000\r\n',
    })
    expect(
      tags.umid
        .slice(2)
        .toLowerCase()
        .replace(/(00)+$/, ''),
    ).toBe(bext!.umid)
    expect(tags.time_reference).toBe(String(bext!.timeReference))
  })
})
