// The flags of a take and the batch summary line, from analyses of every shape
// the measurement schema has had or may grow into.
import { describe, expect, it } from 'vitest'
import { batchSummary, formatRun, formatShare, takeFlags, type FlaggableTake } from '@shared/take-flags'

const format = { frames: 48_000 * 10, channels: 2, sampleRate: 48_000 }
const channel = (clippedSamples = 0, extra: Record<string, number> = {}) => ({
  samplePeakDbfs: -3,
  truePeakDbtp: -2.5,
  rmsDbfs: -20,
  dcOffset: 0,
  crestFactorDb: 17,
  clippedSamples,
  ...extra,
})
function take(
  opts: {
    clipped?: number[]
    truePeak?: number | null
    lufs?: number | null
    extraLevels?: object
    status?: string
    chExtra?: Record<string, number>
  } = {},
): FlaggableTake {
  return {
    status: opts.status ?? 'ready',
    format,
    analysis: {
      levels: {
        samplePeakDbfs: -3,
        truePeakDbtp: opts.truePeak === undefined ? -2.5 : opts.truePeak,
        rmsDbfs: -20,
        channels: (opts.clipped ?? [0, 0]).map((c) => channel(c, opts.chExtra)),
        ...opts.extraLevels,
      },
      loudness: {
        integratedLufs: opts.lufs === undefined ? -23 : opts.lufs,
        loudnessRangeLu: 3,
        maxMomentaryLufs: -20,
        maxShortTermLufs: -21,
      },
      noiseFloorDbfs: -60,
    },
  }
}

describe('takeFlags', () => {
  it('gives a clean take no flag, and an unmeasured take none either', () => {
    expect(takeFlags(take())).toEqual([])
    expect(takeFlags({ status: 'queued', format: null, analysis: null })).toEqual([])
  })

  it('counts clipped samples of every channel as a share of all samples', () => {
    // 3840 of 960 000 samples = 0.4 %
    const flags = takeFlags(take({ clipped: [1920, 1920] }))
    expect(flags).toEqual([{ kind: 'clipped', label: 'Clipped', detail: '0.4 % clipped' }])
  })

  it('adds the longest run of any channel when the analysis knows it', () => {
    // 576 samples at 48 kHz = 12 ms; 60,000 = 1.25 s
    expect(takeFlags(take({ clipped: [1920, 1920], chExtra: { longestClipSamples: 576 } }))[0].detail).toBe(
      '0.4 % clipped, longest 12 ms',
    )
    expect(takeFlags(take({ clipped: [1920, 1920], chExtra: { longestClipSamples: 60_000 } }))[0].detail).toBe(
      '0.4 % clipped, longest 1.3 s',
    )
  })

  it('flags a true peak above −1 dBTP (EBU R 128 delivery practice), not one at it', () => {
    expect(takeFlags(take({ truePeak: -1 }))).toEqual([])
    expect(takeFlags(take({ truePeak: -0.3 }))).toEqual([
      { kind: 'over-ceiling', label: 'Over the ceiling', detail: 'true peak −0.3 dBTP, above the −1 dBTP ceiling' },
    ])
  })

  it('reads the take\u2019s one true peak (BS.1770-4 Annex 2), not the figure played from silence beside it', () => {
    // The high-accuracy figure assumes silence around the take, so an abrupt start reads higher; the
    // flag repeats the number every list shows.
    expect(takeFlags(take({ truePeak: -1.2, extraLevels: { preciseTruePeakDbtp: -0.8 } }))).toEqual([])
    const flags = takeFlags(take({ truePeak: -0.6, extraLevels: { preciseTruePeakDbtp: -0.2 } }))
    expect(flags[0].detail).toContain('−0.6 dBTP')
  })

  it('spells out the −70 LUFS gate of ITU-R BS.1770-4 for takes with no integrated loudness', () => {
    expect(takeFlags(take({ lufs: null }))).toEqual([
      { kind: 'too-quiet', label: 'Too quiet to measure', detail: 'below the −70 LUFS gate' },
    ])
    expect(takeFlags(take({ lufs: -69.9 }))).toEqual([])
  })

  it('gives several flags in a fixed order', () => {
    expect(takeFlags(take({ clipped: [10, 0], truePeak: 0.5, lufs: null })).map((f) => f.kind)).toEqual([
      'clipped',
      'over-ceiling',
      'too-quiet',
    ])
  })

  it('ignores shapes it does not know instead of guessing', () => {
    expect(takeFlags({ format, analysis: { levels: 'odd', loudness: 3 } })).toEqual([])
    expect(takeFlags({ format: null, analysis: { levels: { channels: [channel(50)] } } })).toEqual([])
  })
})

describe('formatting', () => {
  it('writes shares and runs the way the flags show them', () => {
    expect(formatShare(0.0004)).toBe('< 0.1 %')
    expect(formatShare(0.004)).toBe('0.4 %')
    expect(formatShare(0.25)).toBe('25 %')
    expect(formatRun(0.0001)).toBe('1 ms')
    expect(formatRun(0.012)).toBe('12 ms')
  })
})

describe('batchSummary', () => {
  it('says how many were measured, flagged and refused in one line', () => {
    const takes = [...Array.from({ length: 10 }, () => take()), take({ clipped: [100, 0] }), take({ lufs: null })]
    expect(batchSummary(takes, 2)).toBe('12 of 12 measured · 1 clipped · 1 too quiet · 2 refused')
  })

  it('counts takes still measuring and takes that failed', () => {
    const takes = [take(), take({ status: 'analyzing' }), { status: 'failed', format: null, analysis: null }]
    expect(batchSummary(takes, 0)).toBe('1 of 3 measured · 1 could not be measured')
  })
})
