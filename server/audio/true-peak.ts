// True peak per ITU-R BS.1770-4 Annex 2: 4× oversampling with the Annex's
// 48-tap interpolation filter (4 phases × 12 taps), then the maximum absolute
// value. The coefficients are those printed in the Annex, written here from
// memory; tests/audio/ebu-3341.test.ts (cases 15–19) and the ffmpeg cross-check
// verify them. Real accuracy on single tones at 48 kHz: the two middle phases
// ripple ±0.22 dB (a 4 kHz tone reads +0.2 dB, an 8 kHz one −0.3 dB), and near
// 20 kHz the 4× points can miss a crest by up to 0.5 dB; precise-true-peak.ts is
// what ceilings are held to (tests/audio/true-peak-precise.test.ts).
//
// Working in floating point, the Annex's 12.04 dB headroom attenuation is not
// needed. The filter's taps sit between the original samples (its delay is
// 23.5 output samples), so the sample peak is folded into the maximum: a true
// peak is never below the sample peak. Interpolation runs only where all 12
// taps lie on samples of the take; nothing is assumed before or after it.
//
// The search runs in WebAssembly (wasm/true-peak.as.ts, compiled by
// `npm run build:wasm` into wasm/true-peak.wasm.ts): the lows, highs and bound
// below for four chunks at once in SIMD lanes; where a bound can beat the running
// maximum, an f32 look at the outputs with a proven rounding margin; only where
// that can beat it, the four phases term by term in f64 (the table's order, so
// tests/audio/wasm-kernels.test.ts finds the very maximum of a brute-force pass
// over TRUE_PEAK_PHASES). On the pack benchmark's audio it takes about a fifth
// of the time the same search took in JavaScript.

import { instantiate, type KernelInstance } from './wasm/instance'
import { WASM_BASE64 } from './wasm/true-peak.wasm'

const PHASE_0 = [
  0.001708984375, 0.010986328125, -0.0196533203125, 0.033203125, -0.0594482421875, 0.1373291015625, 0.97216796875,
  -0.102294921875, 0.047607421875, -0.026611328125, 0.014892578125, -0.00830078125,
]
const PHASE_1 = [
  -0.0291748046875, 0.029296875, -0.0517578125, 0.089111328125, -0.16650390625, 0.465087890625, 0.77978515625,
  -0.2003173828125, 0.1015625, -0.0582275390625, 0.0330810546875, -0.0189208984375,
]
// Phases 2 and 3 are phases 1 and 0 reversed (the prototype is linear-phase).
export const TRUE_PEAK_PHASES: readonly (readonly number[])[] = [
  PHASE_0,
  PHASE_1,
  [...PHASE_1].reverse(),
  [...PHASE_0].reverse(),
]

const TAPS = 12
const HISTORY = TAPS - 1
// Interpolation is skipped for a chunk of 4 outputs when a bound on them cannot beat the running
// maximum. Outputs of one chunk read 4 + HISTORY samples: the chunk and the three before it.
// With c the midrange and d the half-range of the samples under a phase's taps h, its outputs obey
// |y| = |c·Σh + Σh·(x − c)| ≤ |c|·|Σh| + d·Σ|h|. Far tighter than max|x|·Σ|h| for smooth or
// one-signed stretches (hum, low notes), where most chunks then need no interpolation at all.
// Phases 1 and 2 (between the samples' midpoints) can overshoot more than phases 0 and 3, so each pair
// has its own bound and is computed only when that bound can beat the running maximum.
const gain = (p: readonly number[]) => Math.abs(p.reduce((s, h) => s + h, 0))
const absGain = (p: readonly number[]) => p.reduce((s, h) => s + Math.abs(h), 0)
const INNER_GAIN = gain(PHASE_1)
const INNER_ABS_GAIN = absGain(PHASE_1)
const OUTER_GAIN = gain(PHASE_0)
const OUTER_ABS_GAIN = absGain(PHASE_0)

interface Kernel {
  memory: WebAssembly.Memory
  setGains(ig: number, iag: number, og: number, oag: number): void
  setExtremesOut(lo: number, hi: number): void
  scan(x: number, n: number, realFrom: number, firstOutput: number, running: number): number
  scanStretches(
    x: number,
    n: number,
    realFrom: number,
    firstOutput: number,
    threshold: number,
    stretch: number,
    out: number,
  ): void
}

/** One instance per thread; its scratch holds the work array of whichever meter is pushing. */
let kernel: KernelInstance<Kernel> | null = null
let view = new Float32Array(0)

function kernelFor(samples: number): { k: Kernel; base: number; view: Float32Array } {
  if (!kernel) {
    kernel = instantiate<Kernel>(WASM_BASE64)
    kernel.exports.setGains(INNER_GAIN, INNER_ABS_GAIN, OUTER_GAIN, OUTER_ABS_GAIN)
  }
  const buffer = kernel.scratch(samples * 4)
  if (view.buffer !== buffer || view.length < samples) view = new Float32Array(buffer, kernel.base, samples)
  return { k: kernel.exports, base: kernel.base, view }
}

/** Frames per chunk of the extremes pushScreened can hand back (block-scan.ts's CHUNK). */
const EXTREMES_CHUNK = 4

/** Per channel, the low and high of each 4-frame chunk of a block (as block-scan.ts defines them). */
export interface ChunkExtremes {
  lo: Float32Array[]
  hi: Float32Array[]
}

/** Per-channel true-peak meter; values are linear (1.0 = full scale). */
export class TruePeakMeter {
  private readonly channels: number
  private readonly peaks: Float64Array
  private readonly history: Float32Array[] // the last HISTORY samples of each channel
  private filled = 0 // how many real samples the history holds (0..HISTORY)

  constructor(channels: number) {
    this.channels = channels
    this.peaks = new Float64Array(channels)
    this.history = Array.from({ length: channels }, () => new Float32Array(HISTORY))
  }

  /** Adds a block (the kernel finds the lows and highs it needs itself). */
  push(planar: Float32Array[]): void {
    const frames = planar[0]?.length ?? 0
    if (frames === 0) return
    const total = HISTORY + frames
    const { k, base, view: x } = kernelFor(total)
    // Layout: x[0..HISTORY) the history (its last `filled` entries real), x[HISTORY..] the block.
    // Outputs need 12 real samples under the taps.
    const realFrom = HISTORY - this.filled
    const firstOutput = realFrom + HISTORY
    for (let ch = 0; ch < this.channels; ch++) {
      x.set(this.history[ch], 0)
      x.set(planar[ch], HISTORY)
      this.peaks[ch] = k.scan(base, total, realFrom, firstOutput, this.peaks[ch])
      this.history[ch].set(x.subarray(total - HISTORY, total))
    }
    this.filled = Math.min(HISTORY, this.filled + frames)
  }

  /**
   * As push, and per stretch of `stretch` frames (from the block's start) the Annex peak when it
   * exceeds the channel's threshold (else the threshold), into out[ch]. The running peaks come out
   * exactly as push makes them: a threshold never exceeds the channel's running peak. With
   * `extremes` (arrays of at least ⌈frames / 4⌉), the kernel's lows and highs of the block's 4-frame
   * chunks are copied there, found on the way.
   */
  pushScreened(
    planar: Float32Array[],
    thresholds: Float64Array,
    stretch: number,
    out: Float64Array[],
    extremes?: ChunkExtremes,
  ): void {
    const frames = planar[0]?.length ?? 0
    if (frames === 0) return
    const total = HISTORY + frames
    const stretches = Math.ceil(frames / stretch)
    const samplesBytes = Math.ceil((total * 4) / 8) * 8
    const chunks = Math.ceil(frames / EXTREMES_CHUNK)
    const wantExtremes = extremes !== undefined && stretch % EXTREMES_CHUNK === 0
    const loAt = samplesBytes + stretches * 8
    const hiAt = loAt + chunks * 4
    const { k, base, view: x } = kernelFor(samplesBytes / 4 + stretches * 2 + (wantExtremes ? 2 * chunks + 4 : 0))
    const results = new Float64Array(x.buffer, base + samplesBytes, stretches)
    const realFrom = HISTORY - this.filled
    const firstOutput = realFrom + HISTORY
    for (let ch = 0; ch < this.channels; ch++) {
      x.set(this.history[ch], 0)
      x.set(planar[ch], HISTORY)
      const threshold = Math.min(thresholds[ch], this.peaks[ch])
      if (wantExtremes) k.setExtremesOut(base + loAt, base + hiAt)
      k.scanStretches(base, total, realFrom, firstOutput, threshold, stretch, base + samplesBytes)
      if (wantExtremes) {
        k.setExtremesOut(0, 0)
        extremes.lo[ch].set(new Float32Array(x.buffer, base + loAt, chunks))
        extremes.hi[ch].set(new Float32Array(x.buffer, base + hiAt, chunks))
      }
      const o = out[ch]
      let peak = this.peaks[ch]
      for (let s = 0; s < stretches; s++) {
        o[s] = results[s]
        if (results[s] > peak) peak = results[s]
      }
      this.peaks[ch] = peak
      this.history[ch].set(x.subarray(total - HISTORY, total))
    }
    this.filled = Math.min(HISTORY, this.filled + frames)
  }

  peak(channel: number): number {
    return this.peaks[channel]
  }
}
