// Forward FFT of real samples for the analysis pass (spectrum, hum, character,
// glyph): the WebAssembly kernel in wasm/fft.as.ts, about twice as fast as
// fft.js's realTransform, which these spectra spent most of their time in.
// Same definition as fft.js (X[k] = Σ x[n]·e^(−2πikn/N)); the values agree to
// rounding (a few parts in 10^15 of the largest bin, tests/audio/wasm-kernels.test.ts).
//
// Each RealFft has its own kernel instance whose memory is laid out once, at
// construction, and never grows, so `input` and `output` are fixed views into it:
// callers write the samples straight into `input` and read the bins from `output`.
import { instantiate } from './wasm/instance'
import { WASM_BASE64 } from './wasm/fft.wasm'

interface FftExports {
  memory: WebAssembly.Memory
  realForward(m: number, input: number, work: number, output: number, rev: number, tw: number, post: number): void
}

export class RealFft {
  readonly size: number
  /** The N real samples to transform (write them here, then call transform()). */
  readonly input: Float64Array
  /** After transform(): re, im of X[k] at 2k, 2k + 1 for k = 0..N/2. */
  readonly output: Float64Array
  private readonly run: () => void

  constructor(size: number) {
    if (!Number.isInteger(Math.log2(size)) || size < 4)
      throw new Error(`FFT size must be a power of two ≥ 4, not ${size}`)
    this.size = size
    const m = size / 2
    const k = instantiate<FftExports>(WASM_BASE64)
    // Byte layout (each part 16-byte aligned): input, work, output, rev, tw, post.
    const input = align(k.base)
    const work = input + size * 8
    const output = work + m * 16
    const rev = output + (m + 1) * 16
    const tw = align(rev + m * 4)
    const post = tw + m * 32
    const buffer = k.scratch(post + (m + 1) * 16 - k.base)
    this.input = new Float64Array(buffer, input, size)
    this.output = new Float64Array(buffer, output, size + 2)
    fillTables(
      m,
      new Int32Array(buffer, rev, m),
      new Float64Array(buffer, tw, m * 4),
      new Float64Array(buffer, post, 2 * (m + 1)),
    )
    const exports = k.exports
    this.run = () => exports.realForward(m, input, work, output, rev, tw, post)
  }

  /** Transforms `input` into `output` (and returns it). */
  transform(): Float64Array {
    this.run()
    return this.output
  }
}

const align = (byte: number) => Math.ceil(byte / 16) * 16

/** Bit reversal of M indices, the butterflies' twiddles and the real split's (see wasm/fft.as.ts). */
function fillTables(m: number, rev: Int32Array, tw: Float64Array, post: Float64Array): void {
  const top = m >> 1
  rev[0] = 0
  for (let n = 1; n < m; n++) rev[n] = (rev[n >> 1] >> 1) | (n & 1 ? top : 0)
  for (let k = 0; k <= m; k++) {
    post[2 * k] = Math.cos((Math.PI * k) / m)
    post[2 * k + 1] = -Math.sin((Math.PI * k) / m)
  }
  // A span-h twiddle's angle πj/h is the split's πk/M at k = j·M/h (the same number: h and M are
  // powers of two, so the scalings are exact), so it is read from that table instead of recomputed.
  for (let h = 1; h < m; h <<= 1) {
    const step = m / h
    for (let j = 0; j < h; j++) {
      const c = post[2 * j * step]
      const s = -post[2 * j * step + 1]
      const at = 4 * (h + j)
      tw[at] = c
      tw[at + 1] = c
      tw[at + 2] = s
      tw[at + 3] = -s
    }
  }
}
