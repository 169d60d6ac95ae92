// The true-peak search runs in WebAssembly (server/audio/wasm/true-peak.as.ts).
// Its answer must be the exact maximum of the ITU-R BS.1770-4 Annex 2
// oversampled signal: here held against a brute-force pass that interpolates
// every output of all four phases (interpolate() of server/audio/true-peak.ts,
// whose taps tests/audio/ebu-3341.test.ts holds against the Annex's table), for
// signals of every shape (noise, tones near full scale, hum, one-signed
// stretches, impulses at block edges, silence), fed in blocks of awkward sizes.
// And the committed binary must be what the source compiles to.
import { spawnSync } from 'node:child_process'
import path from 'node:path'
import { describe, expect, it } from 'vitest'
import { interpolate, TruePeakMeter } from '../../server/audio/true-peak'

const root = path.join(path.dirname(new URL(import.meta.url).pathname), '..', '..')

/** max over all samples and interpolated points whose 12 taps lie on the signal. */
function bruteForce(x: Float32Array): number {
  let peak = 0
  for (const v of x) peak = Math.max(peak, Math.abs(v))
  return x.length >= 12 ? interpolate(x, 11, x.length, peak) : peak
}

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
  ['sine at fs/4 + 1 Hz, near full scale (inter-sample peaks)', make(48_000, (i) => q24(0.999 * Math.sin((2 * Math.PI * 12001 * i) / 48000 + 0.7)))],
  ['sine at 19 kHz', make(20_000, (i) => q24(0.9 * Math.sin((2 * Math.PI * 19000 * i) / 48000)))],
  ['50 Hz hum with a little noise', make(96_000, (i) => q24(0.5 * Math.sin((2 * Math.PI * 50 * i) / 48000) + 0.01 * (rnd() - 0.5)))],
  ['one-signed: DC offset and noise', make(30_000, () => q24(0.6 + 0.05 * (rnd() - 0.5)))],
  ['silence with one full-scale alternating burst', make(40_000, (i) => (i >= 20_000 && i < 20_008 ? (i % 2 ? -1 : 1) : 0))],
  ['impulses at the edges of 4096-frame blocks', make(16_384, (i) => (i % 4096 === 0 || i % 4096 === 4095 ? 0.8 : 0.001 * Math.sin(i)))],
  ['rising level (the running maximum keeps moving)', make(60_000, (i) => q24((i / 60_000) * Math.sin(i * 0.37)))],
  ['shorter than the filter', make(7, (i) => 0.1 * i)],
  ['digital silence', new Float32Array(5000)],
]

describe('true peak in WebAssembly', () => {
  for (const [name, x] of signals) {
    it(`${name}: the exact brute-force maximum, whatever the block sizes`, () => {
      const want = bruteForce(x)
      for (const sizes of [[65_536], [4096], [1, 3, 4, 5, 1000], [17], [2, 4099]]) expect(meter(x, sizes)).toBe(want)
    })
  }

  it('the committed module is what `npm run build:wasm` makes of the source (AssemblyScript)', () => {
    const r = spawnSync(process.execPath, [path.join(root, 'scripts', 'build-wasm.mjs'), '--check'], { encoding: 'utf8' })
    expect(r.stderr).toBe('')
    expect(r.status).toBe(0)
  })
})
