// Clipping and noise floor. References: sox's own count of the samples its
// gain effect clipped, and sox stats' 50 ms windowed RMS trough ("RMS Tr dB")
// and RMS level of the same noise. The clipping and noise-floor rules
// themselves are common practice, documented in levels.ts and noise-floor.ts.
import { execFileSync } from 'node:child_process'
import { mkdtempSync, rmSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { afterAll, describe, expect, it } from 'vitest'
import { analyzeFile } from '../../server/audio/analyze'
import { sox, soxStats } from '../helpers/reference-tools'
import { measure } from '../helpers/signals'

const dir = mkdtempSync(join(tmpdir(), 'strayfield-levels-'))
afterAll(() => rmSync(dir, { recursive: true, force: true }))

function soxRmsTrough(path: string): number {
  const out = execFileSync('sh', ['-c', 'sox "$1" -n stats 2>&1', 'sox', path], { encoding: 'utf8' })
  return Number(/RMS Tr dB\s+(-?[0-9.]+)/.exec(out)![1])
}

describe('clipped samples', () => {
  it('equal the count sox reports for a sine driven 6 dB past full scale (24-bit, sox gain effect)', async () => {
    const file = join(dir, 'clipped.wav')
    const log = execFileSync(
      'sh',
      ['-c', 'sox -D -n -r 48000 -b 24 -c 1 "$1" synth 0.5 sine 1000 gain 6 2>&1', 'sox', file],
      {
        encoding: 'utf8',
      },
    )
    const soxCount = Number(/gain clipped (\d+) samples/.exec(log)![1])
    const { levels } = (await analyzeFile(file)).analysis
    expect(soxCount).toBeGreaterThan(1000)
    expect(levels.channels[0].clippedSamples).toBe(soxCount)
  })

  it('count runs of ≥ 2 full-scale samples of one polarity, not single touches (common practice; rule in levels.ts)', () => {
    const lsb = 2 ** -15
    const top = 1 - lsb
    // A single touch, a run of 3 at the top, a run of 2 at the bottom, alternating rails, a run across blocks.
    const x = Float32Array.from([0, top, 0.5, top, top, top, 0, -1, -1, 0.2, top, -1, top, -1, 0, 0, top, top])
    const r = measure([x], { sampleRate: 48000, channelMask: 0, encoding: 'pcm', validBitsPerSample: 16 }, 17)
    expect(r.levels.channels[0].clippedSamples).toBe(3 + 2 + 2)
    // The run of 3 at the top is the longest (what the "longest 12 ms" of a Clipped flag reads).
    expect(r.levels.channels[0].longestClipSamples).toBe(3)
  })

  it('in float files, clipped means flat runs at exactly ±1.0; beyond ±1.0 is "over full scale", not clipped (rule in levels.ts)', () => {
    const x = Float32Array.from([0.99999, 0.99999, 0, 1.0, 1.3, 0, -1.2, -2.5, -1.0, 0, 1.0, 1.0, 1.0, 0, -1.0, -1.0])
    const r = measure([x], { sampleRate: 48000, channelMask: 0, encoding: 'float' })
    expect(r.levels.channels[0].clippedSamples).toBe(3 + 2)
    expect(r.levels.channels[0].overFullScaleSamples).toBe(3)
  })
})

describe('noise floor (10th percentile of 50 ms RMS windows, digital zero ignored)', () => {
  it('lies in the quietest tenth: between sox stats’ 50 ms RMS trough and RMS of the quiet noise', async () => {
    // 2 s digital silence, 3 s noise at −60 dB, 7 s noise at −40 dB, 2 s tone: 30 % of the non-silent
    // windows are quiet noise, so the 10th percentile must fall there (the median would not).
    const quiet = join(dir, 'quiet.wav')
    const loud = join(dir, 'loud.wav')
    const tone = join(dir, 'tone.wav')
    const take = join(dir, 'take.wav')
    sox(['-n', '-r', '48000', '-b', '24', '-c', '2', quiet, 'synth', '3', 'whitenoise', 'vol', '-60dB'])
    sox(['-n', '-r', '48000', '-b', '24', '-c', '2', loud, 'synth', '7', 'whitenoise', 'vol', '-40dB'])
    sox(['-n', '-r', '48000', '-b', '24', '-c', '2', tone, 'synth', '2', 'sine', '440', 'vol', '-10dB'])
    sox([quiet, loud, tone, take, 'pad', '2', '0'])
    const [overall] = soxStats(quiet)
    const trough = soxRmsTrough(quiet)
    const floor = (await analyzeFile(take)).analysis.noiseFloorDbfs
    expect(floor).not.toBeNull()
    expect(floor!).toBeGreaterThanOrEqual(trough - 0.01)
    expect(floor!).toBeLessThanOrEqual(overall.rmsDb + 0.01)
    expect(overall.rmsDb - trough).toBeLessThan(1) // the bounds are tight enough to mean something
  })
})
