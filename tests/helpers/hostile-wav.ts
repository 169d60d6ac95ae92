// WAV files whose metadata is built to cost a parser as much as possible: the
// shapes that once froze the server (runs of spaces before a non-space, unclosed
// XML constructs repeated, hundreds of thousands of list entries). The audio is a
// short quiet tone so measuring itself is quick.
import { BEXT_FIXED_SIZE } from '../../server/audio/wav-bext'
import { buildWav, fmtPayload, pcm16 } from './audio-files'

const MiB = 2 ** 20
const u32 = (v: number) => {
  const b = Buffer.alloc(4)
  b.writeUInt32LE(v)
  return b
}
const sub = (id: string, payload: Buffer) => {
  const h = Buffer.alloc(8)
  h.write(id, 0, 4, 'latin1')
  h.writeUInt32LE(payload.length, 4)
  return Buffer.concat(payload.length & 1 ? [h, payload, Buffer.alloc(1)] : [h, payload])
}
const list = (type: string, entries: Buffer[]) => ({
  id: 'LIST',
  payload: Buffer.concat([Buffer.from(type, 'latin1'), ...entries]),
})

function tone(frames = 4800): Buffer {
  return pcm16(Array.from({ length: frames }, (_, i) => Math.round(3000 * Math.sin((2 * Math.PI * 440 * i) / 48000))))
}

/**
 * 1 MiB of iXML (unclosed comments, tags and CDATA openers: each made an old regular expression
 * scan to the end), 1 MiB of spaces in the bext coding history, and one INFO field of 1 MiB of
 * spaces ended by a letter (the shape that made a trailing-space regex quadratic).
 */
export function hugeTextWav(): Buffer {
  const ixmlUnit = '<BWFXML><NOTE>x<!--<?<![CDATA[<a '
  const ixml = Buffer.from('<BWFXML><SCENE>kept</SCENE>' + ixmlUnit.repeat(Math.ceil(MiB / ixmlUnit.length)), 'utf8')
  const bext = Buffer.alloc(BEXT_FIXED_SIZE + MiB, 0x20)
  bext.fill(0, 0, BEXT_FIXED_SIZE)
  bext.write('hostile coding history', 0, 'latin1')
  bext.writeUInt16LE(2, 346)
  const spaces = Buffer.alloc(MiB, 0x20)
  spaces[spaces.length - 1] = 0x78 // 'x'
  return buildWav([
    { id: 'fmt ', payload: fmtPayload({ channels: 1, rate: 48000, bits: 16 }) },
    { id: 'bext', payload: bext },
    { id: 'iXML', payload: ixml },
    list('INFO', [sub('INAM', Buffer.from('hostile title\0')), sub('ICMT', spaces)]),
    { id: 'data', payload: tone() },
  ])
}

/** `entries` LIST/INFO entries plus as many cue points with adtl labels (about 70 bytes an entry of each kind). */
export function manyEntriesWav(entries: number): Buffer {
  const info: Buffer[] = []
  const labels: Buffer[] = []
  const cues = Buffer.alloc(4 + 24 * entries)
  cues.writeUInt32LE(entries, 0)
  for (let i = 0; i < entries; i++) {
    info.push(sub(`I${String(i % 1000).padStart(3, '0')}`, Buffer.from(`v${i}\0`)))
    labels.push(sub('labl', Buffer.concat([u32(i), Buffer.from(`l${i}\0`)])))
    cues.writeUInt32LE(i, 4 + 24 * i)
    cues.writeUInt32LE(i % 4800, 4 + 24 * i + 20)
  }
  return buildWav([
    { id: 'fmt ', payload: fmtPayload({ channels: 1, rate: 48000, bits: 16 }) },
    { id: 'data', payload: tone() },
    list('INFO', info),
    { id: 'cue ', payload: cues },
    list('adtl', labels),
  ])
}
