// AssemblyScript source of k-weighting.wasm.ts (`npm run build:wasm`). The two
// K-weighting stages of ITU-R BS.1770-4 over two channels at once, one channel
// in each f64 lane: the very operations of LoudnessMeter.filterPair in
// ../loudness.ts, in the same order, so the energies are the same numbers.
//
// Memory at `io` (f64): 0..6 the coefficients b0 b1 b2 a1 a2 of stage 1 and a1
// a2 of stage 2; 8..15 the state z1 z2 w1 w2 of channel a then of channel b
// (read, then written back); 16, 17 the weighted energies of a and b (written).
// xa and xb point to f32 samples.

// Keeps the recursive filter states away from subnormal numbers during digital silence (slow on
// x86); the RLB high-pass removes this constant entirely.
const GUARD: f64 = 1e-20

export function filterPair(xa: usize, xb: usize, from: i32, to: i32, io: usize): void {
  const b0 = f64x2.splat(load<f64>(io, 0))
  const b1 = f64x2.splat(load<f64>(io, 8))
  const b2 = f64x2.splat(load<f64>(io, 16))
  const a1 = f64x2.splat(load<f64>(io, 24))
  const a2 = f64x2.splat(load<f64>(io, 32))
  const c1 = f64x2.splat(load<f64>(io, 40))
  const c2 = f64x2.splat(load<f64>(io, 48))
  const minus2 = f64x2.splat(-2)
  const guard = f64x2.splat(GUARD)
  let z1 = f64x2(load<f64>(io, 64), load<f64>(io, 96))
  let z2 = f64x2(load<f64>(io, 72), load<f64>(io, 104))
  let w1 = f64x2(load<f64>(io, 80), load<f64>(io, 112))
  let w2 = f64x2(load<f64>(io, 88), load<f64>(io, 120))
  let e = f64x2.splat(0)
  for (let i = from; i < to; i++) {
    const off = <usize>i << 2
    const v = f64x2.add(f64x2.replace_lane(f64x2.splat(<f64>load<f32>(xa + off)), 1, <f64>load<f32>(xb + off)), guard)
    const y = f64x2.add(f64x2.mul(b0, v), z1)
    z1 = f64x2.add(f64x2.sub(f64x2.mul(b1, v), f64x2.mul(a1, y)), z2)
    z2 = f64x2.sub(f64x2.mul(b2, v), f64x2.mul(a2, y))
    const u = f64x2.add(y, w1)
    w1 = f64x2.add(f64x2.sub(f64x2.mul(minus2, y), f64x2.mul(c1, u)), w2)
    w2 = f64x2.sub(y, f64x2.mul(c2, u))
    e = f64x2.add(e, f64x2.mul(u, u))
  }
  store<f64>(io, f64x2.extract_lane(z1, 0), 64)
  store<f64>(io, f64x2.extract_lane(z2, 0), 72)
  store<f64>(io, f64x2.extract_lane(w1, 0), 80)
  store<f64>(io, f64x2.extract_lane(w2, 0), 88)
  store<f64>(io, f64x2.extract_lane(z1, 1), 96)
  store<f64>(io, f64x2.extract_lane(z2, 1), 104)
  store<f64>(io, f64x2.extract_lane(w1, 1), 112)
  store<f64>(io, f64x2.extract_lane(w2, 1), 120)
  store<f64>(io, f64x2.extract_lane(e, 0), 128)
  store<f64>(io, f64x2.extract_lane(e, 1), 136)
}
