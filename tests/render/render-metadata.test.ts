// What a rendered file says about itself: the bext chunk (EBU Tech 3285 v2)
// read back three ways — ffprobe's format tags (Debian ffmpeg shows the bext
// description as `comment`, the originator as `encoded_by`, the origination
// date as `date`, plus `time_reference` and `coding_history`; it does not show
// the loudness fields), our own reader (readMetadata), and the raw bytes at the
// offsets of the Tech 3285 table: version at 346, loudness fields at 412..421
// as int16 × 100 (LoudnessValue, LoudnessRange, MaxTruePeakLevel,
// MaxMomentaryLoudness, MaxShortTermLoudness) — and the LIST/INFO title and
// keywords, which ffprobe shows as `title` and `IKEY`.
import fs from 'node:fs'
import path from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { probeWav, readMetadata } from '../../server/audio/wav-reader'
import { ffmpegEbur128 } from '../helpers/reference-tools'
import { chunks, ffprobe, META, render, sox, tempDir } from './render-fixtures'

const dir = tempDir('render-meta')
const source = path.join(dir, 'noise.wav')
const out = path.join(dir, 'out.wav')
let result: Awaited<ReturnType<typeof render>>

beforeAll(async () => {
  sox(['-n', '-r', '48000', '-b', '24', '-c', '2', source, 'synth', '5', 'pinknoise', 'vol', '-25dB'])
  result = await render(source, out, {
    metadata: { timeReference: 172_800_000, keywords: ['hum', 'mains', 'Doorbell transformer'] },
  })
})
afterAll(() => fs.rmSync(dir, { recursive: true, force: true }))

describe('bext and INFO of a rendered file', () => {
  it('reads back with ffprobe: description, originator, date, time, time reference, coding history, title, keywords', () => {
    const { tags } = ffprobe(out)
    expect(tags.comment).toBe(META.description)
    expect(tags.encoded_by).toBe('Strayfield')
    expect(tags.originator_reference).toBe('SF-TEST-1')
    expect(tags.date).toBe('2026-11-30')
    expect(tags.creation_time).toBe('09:15:30')
    expect(tags.time_reference).toBe('172800000')
    // Coding history in the EBU R 98 form: the source line, then the render line.
    expect(tags.coding_history).toMatch(
      /^A=PCM,F=48000,W=24,M=stereo,T=source take\r\nA=PCM,F=48000,W=24,M=stereo,T=SF-TEST-1 render, gain \+[0-9.]+ dB/,
    )
    expect(tags.title).toBe(META.title)
    expect(tags.IKEY).toBe('hum; mains; Doorbell transformer')
  })

  it('holds the loudness measured on the rendered audio at bytes 412..421 (int16 × 100), as our reader and ffmpeg see it', async () => {
    const bext = chunks(out).get('bext')!
    expect(bext.readUInt16LE(346)).toBe(2)
    const raw = [412, 414, 416, 418, 420].map((at) => bext.readInt16LE(at) / 100)
    const lv = result.levels
    expect(raw).toEqual(
      [lv.integratedLufs, lv.loudnessRangeLu, lv.truePeakDbtp, lv.maxMomentaryLufs, lv.maxShortTermLufs].map(
        (v) => Math.round(v! * 100) / 100,
      ),
    )
    const meta = await readMetadata(out, await probeWav(out))
    expect(meta.bext).toMatchObject({
      version: 2,
      originator: 'Strayfield',
      loudnessValue: raw[0],
      loudnessRange: raw[1],
      maxTruePeakLevel: raw[2],
      maxMomentaryLoudness: raw[3],
      maxShortTermLoudness: raw[4],
    })
    // The stored integrated loudness is the file's, by ffmpeg ebur128 (one decimal), and the target's.
    const ref = ffmpegEbur128(out)
    expect(Math.abs(raw[0] - ref.integratedLufs)).toBeLessThanOrEqual(0.1)
    expect(Math.abs(raw[0] - -18)).toBeLessThanOrEqual(0.1)
    expect(Math.abs(raw[1] - ref.loudnessRangeLu)).toBeLessThanOrEqual(1) // EBU Tech 3342 meter tolerance
    expect(raw[2]).toBeLessThanOrEqual(-1)
  })

  it('puts bext before the data and LIST/INFO after it (RIFF order: chunk table of the file)', () => {
    const ids = [...chunks(out).keys()]
    expect(ids.indexOf('bext')).toBeLessThan(ids.indexOf('data'))
    expect(ids.indexOf('LIST')).toBeGreaterThan(ids.indexOf('data'))
  })
})
