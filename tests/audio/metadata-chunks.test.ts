// iXML, LIST/INFO, cue + LIST/adtl labels, smpl loops and the music-metadata tags.
// Layouts from the RIFF/MCI specification (1991): cue point = dwName, dwPosition, fccChunk,
// dwChunkStart, dwBlockStart, dwSampleOffset (6 x 4 bytes); labl/note = dwName + text;
// smpl = 9 x u32 header (sample period at 8, MIDI unity note at 12, loop count at 28) then
// 24-byte loops (id, type, start, end, fraction, play count). iXML element names from the
// iXML specification (top-level PROJECT, SCENE, TAKE, TAPE, NOTE; from memory).
import { afterAll, describe, expect, it } from 'vitest'
import { readFileSync, writeFileSync } from 'node:fs'
import { parseFile } from 'music-metadata'
import { probeWav, readMetadata } from '../../server/audio/wav-reader'
import { parseIxml } from '../../server/audio/wav-chunks'
import { writeWav } from '../../server/audio/wav-writer'
import { buildWav, ffprobe, fmtPayload, makeTmpDir, pcm16, rawChunk } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

const fmt = { id: 'fmt ', payload: fmtPayload({ channels: 1, rate: 48000, bits: 16 }) }
const data = { id: 'data', payload: pcm16(new Array(100).fill(0)) }
let n = 0
function file(chunks: Parameters<typeof buildWav>[0]): string {
  const p = tmp.file(`m${n++}.wav`)
  writeFileSync(p, buildWav(chunks))
  return p
}
const list = (type: string, entries: Buffer[]) => ({
  id: 'LIST',
  payload: Buffer.concat([Buffer.from(type, 'latin1'), ...entries]),
})
const u32 = (v: number) => {
  const b = Buffer.alloc(4)
  b.writeUInt32LE(v)
  return b
}

describe('iXML', () => {
  const doc = `<?xml version="1.0" encoding="UTF-8"?>
<!-- <TAKE>99</TAKE> in a comment is not a take -->
<BWFXML>
  <IXML_VERSION>2.10</IXML_VERSION>
  <PROJECT>Coil &amp; Mains &#233;t&#xE9;</PROJECT>
  <SCENE>bench&lt;2&gt;</SCENE>
  <TAKE>
    7
  </TAKE>
  <TAPE/>
  <SPEED><NOTE>nested note is not the take note</NOTE></SPEED>
  <NOTE><![CDATA[hum <loud> near "panel"]]></NOTE>
  <TRACK_LIST><TRACK><NAME>coil</NAME></TRACK></TRACK_LIST>
</BWFXML>`

  it('top-level fields with entities and CDATA decoded, nested and commented elements ignored, raw kept whole', () => {
    expect(parseIxml(doc)).toEqual({
      project: 'Coil & Mains été',
      scene: 'bench<2>',
      take: '7',
      tape: '',
      note: 'hum <loud> near "panel"',
      raw: doc,
    })
  })

  it('absent fields are null; broken documents do not throw', () => {
    expect(parseIxml('<BWFXML><SCENE>a</SCENE></BWFXML>')).toMatchObject({
      project: null,
      scene: 'a',
      take: null,
      tape: null,
      note: null,
    })
    for (const bad of [
      '',
      '<',
      '<BWFXML><TAKE>1',
      '</BWFXML></BWFXML><TAKE>2</TAKE>',
      '<![CDATA[',
      '<!--',
      '&#xFFFFFFFF;',
      '<BWFXML><NOTE>&#xD800;</NOTE></BWFXML>',
    ]) {
      expect(() => parseIxml(bad)).not.toThrow()
    }
    expect(parseIxml('<BWFXML><NOTE>&#xD800;&bogus;</NOTE></BWFXML>').note).toBe('&#xD800;&bogus;')
  })

  it('written by the writer before data, read back by readMetadata (trailing NUL padding dropped)', async () => {
    const p = tmp.file('ixml.wav')
    await writeWav(p, [new Float32Array(10)], {
      sampleRate: 48000,
      channels: 1,
      encoding: 'pcm',
      bitsPerSample: 16,
      ixml: doc,
    })
    const info = await probeWav(p)
    expect(info.chunks.findIndex((c) => c.id === 'iXML')).toBeLessThan(info.chunks.findIndex((c) => c.id === 'data'))
    expect((await readMetadata(p, info)).ixml).toEqual(parseIxml(doc))
    const padded = file([
      fmt,
      { id: 'iXML', payload: Buffer.concat([Buffer.from('<BWFXML><TAPE>T1</TAPE></BWFXML>'), Buffer.alloc(9)]) },
      data,
    ])
    expect((await readMetadata(padded, await probeWav(padded))).ixml).toMatchObject({
      tape: 'T1',
      raw: '<BWFXML><TAPE>T1</TAPE></BWFXML>',
    })
  })
})

describe('LIST/INFO', () => {
  const info = {
    INAM: 'Mains hum, 50 Hz',
    IART: 'field team',
    ICMT: 'coil at 5 cm',
    ICRD: '2024-05-06',
    IGNR: 'field recording',
    ISFT: 'strayfield',
  }

  it('written after data; ffprobe reads the same INFO tags (INAM->title, IART->artist, ICMT->comment, ICRD->date, IGNR->genre, ISFT->encoder)', async () => {
    const p = tmp.file('info.wav')
    await writeWav(p, [new Float32Array(10)], {
      sampleRate: 48000,
      channels: 1,
      encoding: 'pcm',
      bitsPerSample: 16,
      info,
    })
    const probe = await probeWav(p)
    expect(probe.chunks.map((c) => c.id)).toEqual(['JUNK', 'fmt ', 'data', 'LIST'])
    const meta = await readMetadata(p, probe)
    expect(meta.info).toEqual(info)
    const tags = ffprobe(p).format.tags ?? {}
    expect({
      title: tags.title,
      artist: tags.artist,
      comment: tags.comment,
      date: tags.date,
      genre: tags.genre,
      encoder: tags.encoder,
    }).toEqual({
      title: info.INAM,
      artist: info.IART,
      comment: info.ICMT,
      date: info.ICRD,
      genre: info.IGNR,
      encoder: info.ISFT,
    })
    // music-metadata maps the same ids to its common tags (its RIFF INFO map); ASCII text agrees.
    const mm = (await parseFile(p, { skipCovers: true, duration: false })).common
    expect({
      title: mm.title,
      artist: mm.artist,
      comment: mm.comment?.[0]?.text,
      date: mm.date,
      genre: mm.genre?.[0],
    }).toEqual({ title: info.INAM, artist: info.IART, comment: info.ICMT, date: info.ICRD, genre: info.IGNR })
    expect(meta.tags).toMatchObject({
      title: info.INAM,
      artist: info.IART,
      comment: info.ICMT,
      date: info.ICRD,
      genre: info.IGNR,
    })
  })

  it('UTF-8 text: we and ffprobe read it as UTF-8; music-metadata reads Latin-1 (mojibake), so our INFO value replaces its tag', async () => {
    const p = tmp.file('info-utf8.wav')
    await writeWav(p, [new Float32Array(10)], {
      sampleRate: 48000,
      channels: 1,
      encoding: 'pcm',
      bitsPerSample: 16,
      info: { INAM: 'Brumm über Netz → 50 Hz' },
    })
    const meta = await readMetadata(p, await probeWav(p))
    expect(meta.info.INAM).toBe('Brumm über Netz → 50 Hz')
    expect(ffprobe(p).format.tags?.title).toBe('Brumm über Netz → 50 Hz')
    const mm = await parseFile(p, { skipCovers: true, duration: false })
    expect(mm.common.title).toBe(Buffer.from('Brumm über Netz → 50 Hz', 'utf8').toString('latin1'))
    expect(meta.tags.title).toBe('Brumm über Netz → 50 Hz')
  })

  it('Latin-1 bytes that are not valid UTF-8 are read as Latin-1 (the RIFF default code page)', async () => {
    const p = file([
      fmt,
      data,
      list('INFO', [rawChunk({ id: 'ICMT', payload: Buffer.from([0x63, 0x61, 0x66, 0xe9, 0]) })]),
    ])
    expect((await readMetadata(p, await probeWav(p))).info).toEqual({ ICMT: 'café' })
  })
})

describe('cue points with LIST/adtl labels', () => {
  it('written cues come back with labl text; a cue without a label has label null', async () => {
    const p = tmp.file('cues.wav')
    const cues = [
      { id: 1, frame: 0, label: 'start' },
      { id: 2, frame: 4800, label: 'hum rises' },
      { id: 3, frame: 9000 },
    ]
    await writeWav(p, [new Float32Array(10000)], {
      sampleRate: 48000,
      channels: 1,
      encoding: 'pcm',
      bitsPerSample: 16,
      cues,
    })
    const probe = await probeWav(p)
    const meta = await readMetadata(p, probe)
    expect(meta.cues).toEqual([
      { id: 1, frame: 0, label: 'start' },
      { id: 2, frame: 4800, label: 'hum rises' },
      { id: 3, frame: 9000, label: null },
    ])
    // cue point layout per RIFF/MCI: 24 bytes each after the count.
    const c = probe.chunks.find((x) => x.id === 'cue ')!
    const b = readFileSync(p).subarray(c.offset, c.offset + c.size)
    expect(b.readUInt32LE(0)).toBe(3)
    expect([
      b.readUInt32LE(4 + 24),
      b.readUInt32LE(8 + 24),
      b.toString('latin1', 12 + 24, 16 + 24),
      b.readUInt32LE(24 + 24),
    ]).toEqual([2, 4800, 'data', 4800])
  })

  it('hand-built: the frame is dwSampleOffset, note is used when there is no labl, labl wins over note', async () => {
    const cue = Buffer.concat([
      u32(2),
      u32(10),
      u32(999),
      Buffer.from('data'),
      u32(0),
      u32(0),
      u32(480),
      u32(11),
      u32(999),
      Buffer.from('data'),
      u32(0),
      u32(0),
      u32(960),
    ])
    const adtl = list('adtl', [
      rawChunk({ id: 'note', payload: Buffer.concat([u32(10), Buffer.from('note ten\0')]) }),
      rawChunk({ id: 'labl', payload: Buffer.concat([u32(11), Buffer.from('label eleven\0')]) }),
      rawChunk({ id: 'note', payload: Buffer.concat([u32(11), Buffer.from('note eleven\0')]) }),
      rawChunk({ id: 'ltxt', payload: Buffer.alloc(20) }),
    ])
    const p = file([fmt, data, { id: 'cue ', payload: cue }, adtl])
    expect((await readMetadata(p, await probeWav(p))).cues).toEqual([
      { id: 10, frame: 480, label: 'note ten' },
      { id: 11, frame: 960, label: 'label eleven' },
    ])
  })
})

describe('smpl loops', () => {
  it('writer: sample period from the rate, MIDI unity note 60, loops as given (end inclusive)', async () => {
    const p = tmp.file('smpl.wav')
    const loops = [
      { start: 0, end: 47999 },
      { start: 100, end: 200, type: 1 },
    ]
    await writeWav(p, [new Float32Array(48000)], {
      sampleRate: 48000,
      channels: 1,
      encoding: 'pcm',
      bitsPerSample: 16,
      loops,
    })
    const probe = await probeWav(p)
    const meta = await readMetadata(p, probe)
    expect(meta.loops).toEqual([
      { start: 0, end: 47999, type: 0 },
      { start: 100, end: 200, type: 1 },
    ])
    const c = probe.chunks.find((x) => x.id === 'smpl')!
    const b = readFileSync(p).subarray(c.offset, c.offset + c.size)
    expect([b.readUInt32LE(8), b.readUInt32LE(12), b.readUInt32LE(28), c.size]).toEqual([20833, 60, 2, 36 + 2 * 24])
  })

  it('hand-built: a loop count larger than the chunk holds reads only the loops present; other types kept', async () => {
    const head = Buffer.alloc(36)
    head.writeUInt32LE(1000, 28) // claims 1000 loops
    const loop = Buffer.concat([u32(0), u32(7), u32(5), u32(50), u32(0), u32(0)])
    const p = file([fmt, data, { id: 'smpl', payload: Buffer.concat([head, loop]) }])
    expect((await readMetadata(p, await probeWav(p))).loops).toEqual([{ start: 5, end: 50, type: 7 }])
  })
})

describe('tags when music-metadata refuses the file', () => {
  it('a CSET chunk shorter than 8 bytes makes music-metadata throw; the take is still read, tags = {}', async () => {
    const p = file([fmt, { id: 'CSET', payload: Buffer.alloc(4) }, data])
    await expect(parseFile(p, { skipCovers: true, duration: false })).rejects.toThrow()
    const meta = await readMetadata(p, await probeWav(p))
    expect(meta.tags).toEqual({})
    expect(meta).toMatchObject({ bext: null, ixml: null, info: {}, cues: [], loops: [] })
  })
})

describe('tags only from files that can hold them', () => {
  /** An ID3v2.3 tag with one text frame (ID3v2.3.0 informal standard: 10-byte header, syncsafe size). */
  function id3Title(title: string): Buffer {
    const text = Buffer.concat([Buffer.from([0]), Buffer.from(title, 'latin1')]) // encoding 0: ISO-8859-1
    const frameHead = Buffer.alloc(10)
    frameHead.write('TIT2', 0, 'latin1')
    frameHead.writeUInt32BE(text.length, 4)
    const body = Buffer.concat([frameHead, text])
    const head = Buffer.from([0x49, 0x44, 0x33, 3, 0, 0, 0, 0, 0, 0])
    for (let i = 0; i < 4; i++) head[9 - i] = (body.length >> (7 * i)) & 0x7f
    return Buffer.concat([head, body])
  }

  it('an id3 chunk is a tag source: its title comes through, as ffprobe and music-metadata read it', async () => {
    const p = file([fmt, data, { id: 'id3 ', payload: id3Title('Bench supply idle') }])
    const meta = await readMetadata(p, await probeWav(p))
    expect(meta.tags.title).toBe('Bench supply idle')
    expect(ffprobe(p).format.tags?.title).toBe('Bench supply idle')
  })

  it('a file of fmt and data only gets tags = {}, what music-metadata finds in it too', async () => {
    const p = file([fmt, data])
    expect((await readMetadata(p, await probeWav(p))).tags).toEqual({})
    expect((await parseFile(p, { skipCovers: true, duration: false })).common.title).toBeUndefined()
  })
})
