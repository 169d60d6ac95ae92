// Cross-check of sample-domain levels against `sox FILE -n stats` on signals
// that sox and ffmpeg generate themselves (tests/helpers/reference-tools.ts).
// sox prints levels to 0.01 dB and the DC offset to 6 decimals; tolerances
// are ±0.02 dB for peak and RMS (so at most one rounding step apart) and
// 2e-6 of full scale for DC offset. sox's RMS is the plain mathematical one
// (a full-scale sine reads −3.01 dB), the convention this engine uses.
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, beforeAll, describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { generateReferenceSignals, REFERENCE_SIGNALS, sox, soxStats } from '../helpers/reference-tools'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-xsox-'))
let files: { name: string; file: string }[] = []

beforeAll(() => {
  files = generateReferenceSignals(dir)
})
afterAll(() => rmSync(dir, { recursive: true, force: true }))

function expectDb(ours: number | null, theirs: number) {
  expect(ours).not.toBeNull()
  expect(Math.abs(ours! - theirs)).toBeLessThanOrEqual(0.02)
}

describe('sample peak, RMS and DC offset against sox stats', () => {
  REFERENCE_SIGNALS.forEach((name, i) => {
    it(name, async () => {
      const { file } = files[i]
      const stats = soxStats(file)
      const { levels } = (await analyzeFile(file)).analysis
      // Overall column: peak is the maximum over channels, RMS over all samples of all channels.
      expectDb(levels.samplePeakDbfs, stats[0].peakDb)
      expectDb(levels.rmsDbfs, stats[0].rmsDb)
      const perChannel = stats.length > 1 ? stats.slice(1) : stats
      expect(perChannel.length).toBe(levels.channels.length)
      perChannel.forEach((ref, ch) => {
        expectDb(levels.channels[ch].samplePeakDbfs, ref.peakDb)
        expectDb(levels.channels[ch].rmsDbfs, ref.rmsDb)
        expect(Math.abs(levels.channels[ch].dcOffset - ref.dcOffset)).toBeLessThanOrEqual(2e-6)
      })
    })
  })

  it('channels that differ are measured apart: left tone, right quieter noise with DC (sox -M)', async () => {
    const left = join(dir, 'left.wav')
    const right = join(dir, 'right.wav')
    const both = join(dir, 'both.wav')
    sox(['-n', '-r', '48000', '-b', '24', '-c', '1', left, 'synth', '5', 'sine', '1000', 'vol', '-6dB'])
    sox([
      '-n',
      '-r',
      '48000',
      '-b',
      '24',
      '-c',
      '1',
      right,
      'synth',
      '5',
      'whitenoise',
      'vol',
      '-30dB',
      'dcshift',
      '-0.01',
    ])
    sox(['-M', left, right, both])
    const stats = soxStats(both)
    const { levels } = (await analyzeFile(both)).analysis
    expectDb(levels.samplePeakDbfs, stats[0].peakDb)
    expectDb(levels.rmsDbfs, stats[0].rmsDb)
    for (const ch of [0, 1]) {
      expectDb(levels.channels[ch].samplePeakDbfs, stats[ch + 1].peakDb)
      expectDb(levels.channels[ch].rmsDbfs, stats[ch + 1].rmsDb)
      expect(Math.abs(levels.channels[ch].dcOffset - stats[ch + 1].dcOffset)).toBeLessThanOrEqual(2e-6)
    }
    expect(levels.channels[0].rmsDbfs! - levels.channels[1].rmsDbfs!).toBeGreaterThan(10)
  })
})
