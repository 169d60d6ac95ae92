// Metadata that is built to hurt: every reader stays within its caps and says
// what it dropped (server/audio/wav-limits.ts). The shapes are those that once
// made the old regular-expression readers quadratic (runs of spaces before a
// non-space, unclosed XML constructs) and lists of hundreds of thousands of entries.
import { writeFileSync } from 'node:fs'
import { afterAll, describe, expect, it } from 'vitest'
import { FileMetadata } from '@shared/schemas/analysis'
import { parseInfo, parseIxml } from '../../server/audio/wav-chunks'
import {
  ENTRY_CAP,
  FIELD_CAP,
  headBytes,
  MetaBudget,
  TOTAL_TEXT_CAP,
  trimEndCodes,
} from '../../server/audio/wav-limits'
import { probeWav, readMetadata } from '../../server/audio/wav-reader'
import { hugeTextWav, manyEntriesWav } from '../helpers/hostile-wav'
import { makeTmpDir } from '../helpers/audio-files'

const tmp = makeTmpDir()
afterAll(() => tmp.cleanup())

const sub = (id: string, payload: Buffer) => {
  const h = Buffer.alloc(8)
  h.write(id, 0, 4, 'latin1')
  h.writeUInt32LE(payload.length, 4)
  return Buffer.concat(payload.length & 1 ? [h, payload, Buffer.alloc(1)] : [h, payload])
}

describe('linear readers', () => {
  it('trims trailing padding by a backwards scan, keeping inner spaces', () => {
    expect(trimEndCodes('a b \0 \0', [0, 32])).toBe('a b')
    expect(trimEndCodes(' '.repeat(1_000_000) + 'x', [0, 32])).toHaveLength(1_000_001)
  })

  it('iXML: fields and raw capped at FIELD_CAP, with a note; the scan still finds fields after megabytes of broken markup', () => {
    const junk = '<!--<?<![CDATA[<a '.repeat(60_000)
    const doc = `<BWFXML><SCENE>s1</SCENE><NOTE>${'n'.repeat(FIELD_CAP + 10)}</NOTE><TAKE>${junk}</TAKE></BWFXML>`
    const budget = new MetaBudget()
    const x = parseIxml(doc, budget)
    expect(x.scene).toBe('s1')
    expect(x.note).toHaveLength(FIELD_CAP)
    expect(x.raw).toHaveLength(FIELD_CAP)
    expect(budget.dropped).toContain(`iXML NOTE: ${FIELD_CAP + 10} characters, kept the first ${FIELD_CAP}`)
    expect(budget.dropped).toContain(`iXML document: ${doc.length} characters, kept the first ${FIELD_CAP}`)
    // A document whose field follows unclosed constructs: everything after them is their content.
    expect(parseIxml('<BWFXML><!-- open <SCENE>hidden</SCENE>').scene).toBeNull()
  })

  it('INFO: at most ENTRY_CAP entries of a list; a long value cut with a note; the take total bounded', () => {
    const entries = Array.from({ length: ENTRY_CAP + 500 }, (_, i) =>
      sub(`I${String(i).padStart(3, '0').slice(-3)}`, Buffer.from(`${'v'.repeat(300)}${i}\0`)),
    )
    const budget = new MetaBudget()
    const info = parseInfo(Buffer.concat([Buffer.from('INFO'), ...entries]), budget)
    expect(Object.keys(info).length).toBeLessThanOrEqual(ENTRY_CAP)
    expect(budget.dropped).toContain(`LIST/INFO: more than ${ENTRY_CAP} entries, read the first ${ENTRY_CAP}`)
    const kept = Object.values(info).reduce((n, v) => n + v.length, 0)
    expect(kept).toBeLessThanOrEqual(TOTAL_TEXT_CAP)
    expect(budget.dropped.some((d) => d.includes(`metadata text was used up`))).toBe(true)
  })

  it('cuts UTF-8 on a character boundary', () => {
    const b = Buffer.from('aé€') // 1 + 2 + 3 bytes
    expect(headBytes(b, 2).toString('utf8')).toBe('a')
    expect(headBytes(b, 3).toString('utf8')).toBe('aé')
    expect(headBytes(b, 6)).toBe(b)
  })
})

describe('whole files', () => {
  it('1 MiB each of iXML, coding-history spaces and INFO text: bounded metadata, notes of what was dropped', async () => {
    const p = tmp.file('huge.wav')
    writeFileSync(p, hugeTextWav())
    const meta = FileMetadata.parse(await readMetadata(p, await probeWav(p)))
    expect(meta.ixml?.scene).toBe('kept')
    expect(meta.bext?.description).toBe('hostile coding history')
    expect(meta.bext?.codingHistory).toBe('') // nothing but padding
    expect(meta.info.INAM).toBe('hostile title')
    expect(meta.dropped).toEqual(
      expect.arrayContaining([
        expect.stringMatching(/^iXML document: \d+ characters, kept the first 65536$/),
        'INFO ICMT: 1048576 bytes, read the first 262144',
        "general tags: not read (the file's metadata is over the limits above)",
      ]),
    )
    expect(JSON.stringify(meta).length).toBeLessThan(TOTAL_TEXT_CAP * 2)
  })

  it('200,000 INFO entries, cue points and labels: at most ENTRY_CAP of each, and says so', async () => {
    const p = tmp.file('many.wav')
    writeFileSync(p, manyEntriesWav(200_000))
    const meta = FileMetadata.parse(await readMetadata(p, await probeWav(p)))
    expect(Object.keys(meta.info).length).toBeLessThanOrEqual(ENTRY_CAP)
    expect(meta.cues).toHaveLength(ENTRY_CAP)
    expect(meta.cues[5]).toEqual({ id: 5, frame: 5, label: 'l5' })
    expect(meta.dropped).toEqual(
      expect.arrayContaining([
        `LIST/INFO: more than ${ENTRY_CAP} entries, read the first ${ENTRY_CAP}`,
        `cue: 200000 entries, read the first ${ENTRY_CAP}`,
        `LIST/adtl: more than ${ENTRY_CAP} entries, read the first ${ENTRY_CAP}`,
      ]),
    )
  })
})
