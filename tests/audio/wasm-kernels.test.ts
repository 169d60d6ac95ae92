// The true-peak search and the K-weighting run in WebAssembly
// (server/audio/wasm/*.as.ts). The true peak must be the exact maximum of the ITU-R BS.1770-4 Annex 2
// oversampled signal: here held against a brute-force pass that computes every
// output of all four phases from the Annex's table (TRUE_PEAK_PHASES), for
// signals of every shape (noise, tones near full scale, hum, one-signed
// stretches, impulses at block edges, silence), fed in blocks of awkward sizes.
// The loudness meter's 100 ms momentary levels must be those of a plain
// JavaScript K-weighting (the ITU-R BS.1770-4 filters of k-weighting.ts, run
// sample by sample in f64), for one to six channels with their weights.
// The chunk lows and highs the kernel hands back must be the samples' own.
// The real FFT (fft.as.ts) must give NumPy's numpy.fft.rfft (Debian python3-numpy,
// pocketfft) to rounding, and the DFT's definition on a short signal.
// And the committed binaries must be what the sources compile to.
import { execFileSync, spawnSync } from 'node:child_process'
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs'
import { tmpdir } from 'node:os'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { channelWeights } from '../../server/audio/channel-weights'
import { preFilter, rlbHighPass } from '../../server/audio/k-weighting'
import { LoudnessMeter } from '../../server/audio/loudness'
import { PreciseTruePeakMeter } from '../../server/audio/precise-true-peak'
import { RealFft } from '../../server/audio/real-fft'
import { TruePeakMeter } from '../../server/audio/true-peak'
import { truePeakBruteForce } from '../helpers/signals'

const root = path.join(path.dirname(new URL(import.meta.url).pathname), '..', '..')

function meter(x: Float32Array, sizes: number[]): number {
  const m = new TruePeakMeter(1)
  let at = 0
  let k = 0
  while (at < x.length) {
    const n = Math.min(x.length - at, sizes[k++ % sizes.length])
    m.push([x.slice(at, at + n)])
    at += n
  }
  return m.peak(0)
}

let seed = 12345
const rnd = () => {
  seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0
  return seed / 2 ** 32
}
const make = (n: number, f: (i: number) => number) => Float32Array.from({ length: n }, (_, i) => f(i))
const q24 = (v: number) => Math.round(v * 8388608) / 8388608

const signals: [string, Float32Array][] = [
  ['white noise', make(50_000, () => q24((rnd() * 2 - 1) * 0.7))],
  [
    'sine at fs/4 + 1 Hz, near full scale (inter-sample peaks)',
    make(48_000, (i) => q24(0.999 * Math.sin((2 * Math.PI * 12001 * i) / 48000 + 0.7))),
  ],
  ['sine at 19 kHz', make(20_000, (i) => q24(0.9 * Math.sin((2 * Math.PI * 19000 * i) / 48000)))],
  [
    '50 Hz hum with a little noise',
    make(96_000, (i) => q24(0.5 * Math.sin((2 * Math.PI * 50 * i) / 48000) + 0.01 * (rnd() - 0.5))),
  ],
  ['one-signed: DC offset and noise', make(30_000, () => q24(0.6 + 0.05 * (rnd() - 0.5)))],
  [
    'silence with one full-scale alternating burst',
    make(40_000, (i) => (i >= 20_000 && i < 20_008 ? (i % 2 ? -1 : 1) : 0)),
  ],
  [
    'impulses at the edges of 4096-frame blocks',
    make(16_384, (i) => (i % 4096 === 0 || i % 4096 === 4095 ? 0.8 : 0.001 * Math.sin(i))),
  ],
  ['rising level (the running maximum keeps moving)', make(60_000, (i) => q24((i / 60_000) * Math.sin(i * 0.37)))],
  ['shorter than the filter', make(7, (i) => 0.1 * i)],
  ['digital silence', new Float32Array(5000)],
]

describe('true peak in WebAssembly', () => {
  for (const [name, x] of signals) {
    it(`${name}: the exact brute-force maximum, whatever the block sizes`, () => {
      const want = truePeakBruteForce(x)
      for (const sizes of [[65_536], [4096], [1, 3, 4, 5, 1000], [17], [2, 4099]]) expect(meter(x, sizes)).toBe(want)
    })
  }

  // The high-accuracy meter's screening pass runs every 256-frame stretch afresh from a threshold
  // below the running peak, where the bound lets most chunks through to the f32 look at their
  // outputs: whatever the threshold, the stretches' Annex peaks must top out at the exact maximum.
  for (const [name, x] of signals) {
    it(`${name}: stretch by stretch from a low threshold, still the exact brute-force maximum`, () => {
      const want = truePeakBruteForce(x)
      for (const fraction of [0, 0.5, 0.891, 0.999]) {
        const m = new TruePeakMeter(1)
        const thresholds = new Float64Array(1)
        let top = 0
        for (let at = 0; at < x.length; at += 4099) {
          const block = x.slice(at, at + 4099)
          const out = [new Float64Array(Math.ceil(block.length / 256))]
          thresholds[0] = m.peak(0) * fraction
          m.pushScreened([block], thresholds, 256, out)
          for (const v of out[0]) top = Math.max(top, v)
        }
        expect(m.peak(0)).toBe(want)
        expect(top).toBe(want)
      }
    })
  }

  // The measurement engine takes each 4-frame chunk's low and high from the kernel (meter.ts): they
  // must be the plain minimum and maximum of the chunk's samples, for every signal and block size.
  for (const [name, x] of signals) {
    it(`${name}: the kernel's chunk lows and highs are the samples' minima and maxima`, () => {
      const wrong: string[] = []
      for (const sizes of [[65_536], [1, 3, 4, 5, 1000], [2, 4099]]) {
        const m = new PreciseTruePeakMeter(2)
        const y = x.map((v) => -0.5 * v) // a second channel, different from the first
        for (let at = 0, k = 0; at < x.length; k++) {
          const n = Math.min(x.length - at, sizes[k % sizes.length])
          const chunks = Math.ceil(n / 4)
          const extremes = {
            lo: [new Float32Array(chunks).fill(9), new Float32Array(chunks).fill(9)],
            hi: [new Float32Array(chunks).fill(-9), new Float32Array(chunks).fill(-9)],
          }
          m.push([x.slice(at, at + n), y.slice(at, at + n)], extremes)
          for (const [ch, s] of [x, y].entries()) {
            for (let c = 0; c < chunks; c++) {
              let lo = Infinity
              let hi = -Infinity
              for (let i = at + 4 * c; i < Math.min(at + n, at + 4 * c + 4); i++) {
                lo = Math.min(lo, s[i])
                hi = Math.max(hi, s[i])
              }
              // + 0 makes −0 and 0 one value: a minimum of (−0, 0) may be either, and both are silence.
              if (extremes.lo[ch][c] + 0 !== lo + 0 || extremes.hi[ch][c] + 0 !== hi + 0)
                wrong.push(
                  `ch ${ch}, frame ${at + 4 * c}: ${extremes.lo[ch][c]}..${extremes.hi[ch][c]}, not ${lo}..${hi}`,
                )
            }
          }
          at += n
        }
      }
      expect(wrong.slice(0, 5)).toEqual([])
    })
  }

  for (const [channels, mask] of [
    [1, 0],
    [2, 0],
    [3, 0],
    [6, 0x3f],
  ] as const) {
    it(`K-weighting, ${channels} channel(s)${mask ? ' (5.1: LFE weight 0, surrounds 1.41)' : ''}: the momentary levels of a plain JavaScript filter`, () => {
      const fs = 48000
      const frames = fs * 2 + 1234
      const planar = Array.from({ length: channels }, (_, c) =>
        make(frames, (i) => q24(0.3 * Math.sin(i * (0.01 + 0.003 * c)) + 0.2 * (rnd() - 0.5))),
      )
      const weights = channelWeights(channels, mask)
      const got: (number | null)[] = []
      const m = new LoudnessMeter({ sampleRate: fs, channels, weights, onMomentary: (_t, l) => got.push(l) })
      for (let at = 0, k = 0; at < frames; k++) {
        const n = Math.min(frames - at, [4096, 1000, 7, 65536][k % 4])
        m.push(planar.map((x) => x.subarray(at, at + n)))
        at += n
      }
      // Reference: both stages in direct form, the weighted energy of each 100 ms sub-block.
      const s1 = preFilter(fs)
      const s2 = rlbHighPass(fs)
      const sub: number[] = []
      const energy = new Float64Array(Math.floor(frames / (fs / 10)))
      for (let c = 0; c < channels; c++) {
        let x1 = 0,
          x2 = 0,
          y1 = 0,
          y2 = 0,
          u1 = 0,
          u2 = 0
        for (let i = 0; i < energy.length * (fs / 10); i++) {
          const x = planar[c][i]
          const y = s1.b0 * x + s1.b1 * x1 + s1.b2 * x2 - s1.a1 * y1 - s1.a2 * y2
          const u = y - 2 * y1 + y2 - s2.a1 * u1 - s2.a2 * u2
          x2 = x1
          x1 = x
          u2 = u1
          u1 = u
          y2 = y1
          y1 = y
          energy[Math.floor(i / (fs / 10))] += weights[c] * u * u
        }
      }
      for (let k = 3; k < energy.length; k++)
        sub.push(-0.691 + 10 * Math.log10((energy[k] + energy[k - 1] + energy[k - 2] + energy[k - 3]) / (0.4 * fs)))
      expect(got.length).toBe(sub.length)
      for (let k = 0; k < sub.length; k++) expect(got[k]).toBeCloseTo(sub[k], 9)
    })
  }

  // Compiling every kernel with AssemblyScript takes seconds on a quiet machine, minutes on a loaded one.
  it(
    'the committed modules are what `npm run build:wasm` makes of the sources (AssemblyScript)',
    { timeout: 300_000 },
    () => {
      const r = spawnSync(process.execPath, [path.join(root, 'scripts', 'build-wasm.mjs'), '--check'], {
        encoding: 'utf8',
      })
      expect(r.stderr).toBe('')
      expect(r.status).toBe(0)
    },
  )
})

describe('real FFT in WebAssembly', () => {
  /** Largest |ours − reference| over every bin, relative to the largest bin. */
  function relativeError(got: Float64Array, want: ArrayLike<number>, bins: number): number {
    let err = 0
    let top = 0
    for (let i = 0; i < 2 * bins; i++) {
      err = Math.max(err, Math.abs(got[i] - want[i]))
      top = Math.max(top, Math.abs(want[i]))
    }
    return err / top
  }

  it('X[k] = Σ x[n]·e^(−2πikn/N), the definition, for N = 8', () => {
    const x = [0.5, -1, 0.25, 0.75, 0, -0.5, 1, 0.125]
    const fft = new RealFft(8)
    fft.input.set(x)
    const want: number[] = []
    for (let k = 0; k <= 4; k++) {
      let re = 0
      let im = 0
      for (let n = 0; n < 8; n++) {
        re += x[n] * Math.cos((2 * Math.PI * k * n) / 8)
        im -= x[n] * Math.sin((2 * Math.PI * k * n) / 8)
      }
      want.push(re, im)
    }
    expect(relativeError(fft.transform(), want, 5)).toBeLessThan(1e-15)
  })

  it('numpy.fft.rfft gives the same bins to rounding, N = 4 to 65536 (tone, noise and DC)', () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-fft-'))
    try {
      for (const n of [4, 32, 256, 4096, 16384, 65536]) {
        const x = new Float64Array(n)
        for (let i = 0; i < n; i++) x[i] = 0.3 + Math.sin((2 * Math.PI * 1000 * i) / 48000) + (rnd() - 0.5)
        const file = path.join(dir, `x${n}.f64`)
        writeFileSync(file, x)
        const out = execFileSync(
          '/usr/bin/python3',
          [
            '-c',
            'import numpy, sys; X = numpy.fft.rfft(numpy.fromfile(sys.argv[1], "<f8")); sys.stdout.buffer.write(numpy.column_stack([X.real, X.imag]).astype("<f8").tobytes())',
            file,
          ],
          { maxBuffer: 1 << 24 },
        )
        const want = new Float64Array(Uint8Array.from(out).buffer) // a copy: the output's offset need not be 8-aligned
        const fft = new RealFft(n)
        fft.input.set(x)
        expect(want.length).toBe(n + 2)
        expect(relativeError(fft.transform(), want, n / 2 + 1)).toBeLessThan(1e-13)
      }
    } finally {
      rmSync(dir, { recursive: true, force: true })
    }
  })
})
