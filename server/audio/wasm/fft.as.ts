// AssemblyScript source of fft.wasm.ts (`npm run build:wasm`). The forward FFT
// of N real samples (N = 2M, a power of two) for the analysis's averaged spectra:
// the samples taken in pairs as M complex numbers z[n] = x[2n] + i·x[2n+1], a
// radix-2 complex FFT of those in f64x2 lanes (one complex number a lane pair),
// then the usual split into the spectrum of the real signal:
//   X[k] = E[k] + e^(−2πik/N)·O[k], E = (Z[k] + Z*[M−k]) / 2, O = (Z[k] − Z*[M−k]) / 2i,
// for k = 0..M. The tables are computed by the caller (../real-fft.ts), which lays
// everything out in this module's memory (byte addresses below):
//   input   N f64, the real samples
//   work    M complex (re, im f64 pairs), the complex FFT in place
//   output  M + 1 complex: X[0..M]
//   rev     M i32, the bit-reversed index of each n
//   tw      32 bytes per twiddle at tw + 32·(h + j) for span h = 1, 2, 4 … M/2 and j < h:
//           (cos θ, cos θ) then (sin θ, −sin θ), θ = πj/h (so e^(−iθ) times b is b·(c, c) + swap(b)·(s, −s))
//   post    M + 1 pairs (cos φ, −sin φ), φ = 2πk/N

export function realForward(
  m: i32,
  input: usize,
  work: usize,
  output: usize,
  rev: usize,
  tw: usize,
  post: usize,
): void {
  // Bit-reversed order; the first span (h = 1) has the twiddle 1: butterflies without products.
  for (let n = 0; n < m; n += 2) {
    const a = v128.load(input + (<usize>load<i32>(rev + (<usize>n << 2)) << 4))
    const b = v128.load(input + (<usize>load<i32>(rev + (<usize>(n + 1) << 2)) << 4))
    const p = work + (<usize>n << 4)
    v128.store(p, f64x2.add(a, b))
    v128.store(p, f64x2.sub(a, b), 16)
  }
  for (let h = 2; h < m; h <<= 1) {
    const span = <usize>h << 4
    const t0 = tw + (<usize>h << 5)
    for (let start = 0; start < m; start += h << 1) {
      let p = work + (<usize>start << 4)
      let t = t0
      const end = p + span
      while (p < end) {
        const a = v128.load(p)
        const b = v128.load(p + span)
        const bs = v128.shuffle<f64>(b, b, 1, 0)
        const prod = f64x2.add(f64x2.mul(b, v128.load(t)), f64x2.mul(bs, v128.load(t, 16)))
        v128.store(p, f64x2.add(a, prod))
        v128.store(p + span, f64x2.sub(a, prod))
        p += 16
        t += 32
      }
    }
  }
  for (let k = 0; k <= m; k++) {
    const zk = work + (<usize>(k == m ? 0 : k) << 4)
    const zc = work + (<usize>(k == 0 ? 0 : m - k) << 4)
    const zr = load<f64>(zk)
    const zi = load<f64>(zk, 8)
    const cr = load<f64>(zc)
    const ci = -load<f64>(zc, 8)
    const er = (zr + cr) * 0.5
    const ei = (zi + ci) * 0.5
    // O = (Z[k] − conj Z[M−k]) / 2i
    const or = (zi - ci) * 0.5
    const oi = -(zr - cr) * 0.5
    const w = post + (<usize>k << 4)
    const wr = load<f64>(w)
    const wi = load<f64>(w, 8)
    const x = output + (<usize>k << 4)
    store<f64>(x, er + (or * wr - oi * wi))
    store<f64>(x, ei + (or * wi + oi * wr), 8)
  }
}
