// AssemblyScript source of true-peak.wasm (`npm run build:wasm`; the test
// tests/audio/true-peak-wasm.test.ts checks the committed binary is this file
// compiled). The search described in ../true-peak.ts, with the lows and highs of
// 4-frame chunks and the bound of each chunk computed for four chunks at once in
// 128-bit SIMD lanes. Only chunks whose bound can beat the running maximum go on
// to the scalar path, which computes the four phases of the Annex 2 table term
// by term in f64, in the table's order (two outputs at a time in f64x2 lanes), so the maximum is exactly that of a
// brute-force pass over every output. The SIMD bound works in f32: it is widened by
// SAFE (far more than its rounding error), so it never skips a chunk the exact
// bound would check; it may check a few more.
//
// Memory: x points to HISTORY + frames f32 samples of one channel (the last
// HISTORY samples of the previous block, then the block), laid out by the caller.

const HISTORY: i32 = 11
const CHUNK: i32 = 4
const SAFE: f32 = 1.0001

// Σh and Σ|h| of phases 1–2 (inner) and 0–3 (outer), passed in from ../true-peak.ts.
let innerGain: f64 = 0
let innerAbsGain: f64 = 0
let outerGain: f64 = 0
let outerAbsGain: f64 = 0

// Where scan stores each chunk's low and high (f32, one per chunk, chunk c at +4c), or 0 for not at
// all. The measurement engine takes them from here instead of finding them again in JavaScript
// (block-scan.ts), where choosing the smaller of two samples costs a mispredicted branch.
let loOut: usize = 0
let hiOut: usize = 0

export function setExtremesOut(lo: usize, hi: usize): void {
  loOut = lo
  hiOut = hi
}

@inline function storeExtremes(c: i32, lo: f64, hi: f64): void {
  if (loOut != 0) {
    store<f32>(loOut + (<usize>c << 2), <f32>lo)
    store<f32>(hiOut + (<usize>c << 2), <f32>hi)
  }
}

export function setGains(ig: f64, iag: f64, og: f64, oag: f64): void {
  innerGain = ig
  innerAbsGain = iag
  outerGain = og
  outerAbsGain = oag
}

@inline function at(x: usize, i: i32): f64 {
  return <f64>load<f32>(x + (<usize>i << 2))
}

function interpolateInner(x: usize, from: i32, to: i32, running: f64): f64 {
  let peak = running
  for (let i = from; i < to; i++) {
    const x0 = at(x, i), x1 = at(x, i - 1), x2 = at(x, i - 2), x3 = at(x, i - 3), x4 = at(x, i - 4), x5 = at(x, i - 5)
    const x6 = at(x, i - 6), x7 = at(x, i - 7), x8 = at(x, i - 8), x9 = at(x, i - 9), x10 = at(x, i - 10), x11 = at(x, i - 11)
    const y1 =
      -0.0291748046875 * x0 + 0.029296875 * x1 - 0.0517578125 * x2 + 0.089111328125 * x3 -
      0.16650390625 * x4 + 0.465087890625 * x5 + 0.77978515625 * x6 - 0.2003173828125 * x7 +
      0.1015625 * x8 - 0.0582275390625 * x9 + 0.0330810546875 * x10 - 0.0189208984375 * x11
    const y2 =
      -0.0189208984375 * x0 + 0.0330810546875 * x1 - 0.0582275390625 * x2 + 0.1015625 * x3 -
      0.2003173828125 * x4 + 0.77978515625 * x5 + 0.465087890625 * x6 - 0.16650390625 * x7 +
      0.089111328125 * x8 - 0.0517578125 * x9 + 0.029296875 * x10 - 0.0291748046875 * x11
    const a = max(abs(y1), abs(y2))
    peak = a > peak ? a : peak
  }
  return peak
}

function interpolateOuter(x: usize, from: i32, to: i32, running: f64): f64 {
  let peak = running
  for (let i = from; i < to; i++) {
    const x0 = at(x, i), x1 = at(x, i - 1), x2 = at(x, i - 2), x3 = at(x, i - 3), x4 = at(x, i - 4), x5 = at(x, i - 5)
    const x6 = at(x, i - 6), x7 = at(x, i - 7), x8 = at(x, i - 8), x9 = at(x, i - 9), x10 = at(x, i - 10), x11 = at(x, i - 11)
    const y0 =
      0.001708984375 * x0 + 0.010986328125 * x1 - 0.0196533203125 * x2 + 0.033203125 * x3 -
      0.0594482421875 * x4 + 0.1373291015625 * x5 + 0.97216796875 * x6 - 0.102294921875 * x7 +
      0.047607421875 * x8 - 0.026611328125 * x9 + 0.014892578125 * x10 - 0.00830078125 * x11
    const y3 =
      -0.00830078125 * x0 + 0.014892578125 * x1 - 0.026611328125 * x2 + 0.047607421875 * x3 -
      0.102294921875 * x4 + 0.97216796875 * x5 + 0.1373291015625 * x6 - 0.0594482421875 * x7 +
      0.033203125 * x8 - 0.0196533203125 * x9 + 0.010986328125 * x10 + 0.001708984375 * x11
    const a = max(abs(y0), abs(y3))
    peak = a > peak ? a : peak
  }
  return peak
}

/** x[i] and x[i + 1] widened to f64 lanes. */
@inline function pair(x: usize, i: i32): v128 {
  return f64x2.promote_low_f32x4(v128.load64_zero(x + (<usize>i << 2)))
}

/** interpolateInner for outputs i and i + 1 at once in f64x2 lanes: the same products summed in the same order, so the same values. */
function interpolateInner2(x: usize, from: i32, to: i32, running: f64): f64 {
  let peakV = f64x2.splat(running)
  let i = from
  for (; i + 1 < to; i += 2) {
    const x0 = pair(x, i - 0)
    const x1 = pair(x, i - 1)
    const x2 = pair(x, i - 2)
    const x3 = pair(x, i - 3)
    const x4 = pair(x, i - 4)
    const x5 = pair(x, i - 5)
    const x6 = pair(x, i - 6)
    const x7 = pair(x, i - 7)
    const x8 = pair(x, i - 8)
    const x9 = pair(x, i - 9)
    const x10 = pair(x, i - 10)
    const x11 = pair(x, i - 11)
    let y1 = f64x2.mul(f64x2.splat(-0.0291748046875), x0)
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(0.029296875), x1))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(-0.0517578125), x2))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(0.089111328125), x3))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(-0.16650390625), x4))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(0.465087890625), x5))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(0.77978515625), x6))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(-0.2003173828125), x7))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(0.1015625), x8))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(-0.0582275390625), x9))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(0.0330810546875), x10))
    y1 = f64x2.add(y1, f64x2.mul(f64x2.splat(-0.0189208984375), x11))
    let y2 = f64x2.mul(f64x2.splat(-0.0189208984375), x0)
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(0.0330810546875), x1))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(-0.0582275390625), x2))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(0.1015625), x3))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(-0.2003173828125), x4))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(0.77978515625), x5))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(0.465087890625), x6))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(-0.16650390625), x7))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(0.089111328125), x8))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(-0.0517578125), x9))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(0.029296875), x10))
    y2 = f64x2.add(y2, f64x2.mul(f64x2.splat(-0.0291748046875), x11))
    peakV = f64x2.max(peakV, f64x2.max(f64x2.abs(y1), f64x2.abs(y2)))
  }
  const peak = max(f64x2.extract_lane(peakV, 0), f64x2.extract_lane(peakV, 1))
  return i < to ? interpolateInner(x, i, to, peak) : peak
}

/** interpolateOuter for outputs i and i + 1 at once in f64x2 lanes: the same products summed in the same order, so the same values. */
function interpolateOuter2(x: usize, from: i32, to: i32, running: f64): f64 {
  let peakV = f64x2.splat(running)
  let i = from
  for (; i + 1 < to; i += 2) {
    const x0 = pair(x, i - 0)
    const x1 = pair(x, i - 1)
    const x2 = pair(x, i - 2)
    const x3 = pair(x, i - 3)
    const x4 = pair(x, i - 4)
    const x5 = pair(x, i - 5)
    const x6 = pair(x, i - 6)
    const x7 = pair(x, i - 7)
    const x8 = pair(x, i - 8)
    const x9 = pair(x, i - 9)
    const x10 = pair(x, i - 10)
    const x11 = pair(x, i - 11)
    let y0 = f64x2.mul(f64x2.splat(0.001708984375), x0)
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(0.010986328125), x1))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(-0.0196533203125), x2))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(0.033203125), x3))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(-0.0594482421875), x4))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(0.1373291015625), x5))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(0.97216796875), x6))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(-0.102294921875), x7))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(0.047607421875), x8))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(-0.026611328125), x9))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(0.014892578125), x10))
    y0 = f64x2.add(y0, f64x2.mul(f64x2.splat(-0.00830078125), x11))
    let y3 = f64x2.mul(f64x2.splat(-0.00830078125), x0)
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(0.014892578125), x1))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(-0.026611328125), x2))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(0.047607421875), x3))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(-0.102294921875), x4))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(0.97216796875), x5))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(0.1373291015625), x6))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(-0.0594482421875), x7))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(0.033203125), x8))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(-0.0196533203125), x9))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(0.010986328125), x10))
    y3 = f64x2.add(y3, f64x2.mul(f64x2.splat(0.001708984375), x11))
    peakV = f64x2.max(peakV, f64x2.max(f64x2.abs(y0), f64x2.abs(y3)))
  }
  const peak = max(f64x2.extract_lane(peakV, 0), f64x2.extract_lane(peakV, 1))
  return i < to ? interpolateOuter(x, i, to, peak) : peak
}

// A cheaper screen between the bound and the exact outputs: all four phases of a whole chunk in
// f32x4 lanes (one lane per output position), about half the work of the f64 path. Every
// coefficient is a multiple of 2^-16 below 1, so it is exact in f32, and so are the samples; each
// output is then a sum of 12 rounded products, whose error is at most γ12·Σ|h·x| ≤ 12.01·2^-24·Σ|h|·max|x|
// (the standard bound for recursive summation, Higham §3.1) < 2^-20·Σ|h|·max|x|. APPROX_ERR (2^-17)
// covers that eight times over, so when the estimate plus APPROX_ERR·Σ|h|·max|x| does not beat the
// running maximum, no exact output of the chunk can, and the f64 path is skipped without changing it.
const APPROX_ERR: f64 = 7.62939453125e-6 // 2^-17

/** Per lane k, the largest |output| over the four phases at position i + k, in f32 (see above for its error). */
@inline function approxLanes(x: usize, i: i32): v128 {
  const p = x + (<usize>(i - 11) << 2)
  const v0 = v128.load(p, 44)
  const v1 = v128.load(p, 40)
  const v2 = v128.load(p, 36)
  const v3 = v128.load(p, 32)
  const v4 = v128.load(p, 28)
  const v5 = v128.load(p, 24)
  const v6 = v128.load(p, 20)
  const v7 = v128.load(p, 16)
  const v8 = v128.load(p, 12)
  const v9 = v128.load(p, 8)
  const v10 = v128.load(p, 4)
  const v11 = v128.load(p, 0)
  let y0 = f32x4.mul(f32x4.splat(0.001708984375), v0)
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(0.010986328125), v1))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(-0.0196533203125), v2))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(0.033203125), v3))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(-0.0594482421875), v4))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(0.1373291015625), v5))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(0.97216796875), v6))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(-0.102294921875), v7))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(0.047607421875), v8))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(-0.026611328125), v9))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(0.014892578125), v10))
  y0 = f32x4.add(y0, f32x4.mul(f32x4.splat(-0.00830078125), v11))
  let y1 = f32x4.mul(f32x4.splat(-0.0291748046875), v0)
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(0.029296875), v1))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(-0.0517578125), v2))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(0.089111328125), v3))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(-0.16650390625), v4))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(0.465087890625), v5))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(0.77978515625), v6))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(-0.2003173828125), v7))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(0.1015625), v8))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(-0.0582275390625), v9))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(0.0330810546875), v10))
  y1 = f32x4.add(y1, f32x4.mul(f32x4.splat(-0.0189208984375), v11))
  let y2 = f32x4.mul(f32x4.splat(-0.0189208984375), v0)
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(0.0330810546875), v1))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(-0.0582275390625), v2))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(0.1015625), v3))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(-0.2003173828125), v4))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(0.77978515625), v5))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(0.465087890625), v6))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(-0.16650390625), v7))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(0.089111328125), v8))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(-0.0517578125), v9))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(0.029296875), v10))
  y2 = f32x4.add(y2, f32x4.mul(f32x4.splat(-0.0291748046875), v11))
  let y3 = f32x4.mul(f32x4.splat(-0.00830078125), v0)
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(0.014892578125), v1))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(-0.026611328125), v2))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(0.047607421875), v3))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(-0.102294921875), v4))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(0.97216796875), v5))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(0.1373291015625), v6))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(-0.0594482421875), v7))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(0.033203125), v8))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(-0.0196533203125), v9))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(0.010986328125), v10))
  y3 = f32x4.add(y3, f32x4.mul(f32x4.splat(0.001708984375), v11))
  return f32x4.max(f32x4.max(f32x4.abs(y0), f32x4.abs(y1)), f32x4.max(f32x4.abs(y2), f32x4.abs(y3)))
}

@inline function laneMax(v: v128): f32 {
  return max(max(f32x4.extract_lane(v, 0), f32x4.extract_lane(v, 1)), max(f32x4.extract_lane(v, 2), f32x4.extract_lane(v, 3)))
}

/** Largest |output| over the four phases at positions i .. i + 3, in f32 (see above for its error). */
function approxChunk(x: usize, i: i32): f32 {
  return laneMax(approxLanes(x, i))
}

/** Whether any output of the 16 at i .. i + 15 may exceed the running maximum pk (all lanes alike), given each chunk's window extreme in wmax. */
function groupOver(x: usize, i: i32, wmax: v128, pk: v128): bool {
  const a = f32x4.max(
    f32x4.max(approxLanes(x, i), approxLanes(x, i + 4)),
    f32x4.max(approxLanes(x, i + 8), approxLanes(x, i + 12)),
  )
  const margin = f32x4.splat(laneMax(wmax) * <f32>(APPROX_ERR * innerAbsGain))
  return v128.any_true(f32x4.gt(f32x4.add(a, margin), pk))
}

// The scalar path's state: lows and highs of the previous three chunks.
let l1: f64 = 0, h1: f64 = 0, l2: f64 = 0, h2: f64 = 0, l3: f64 = 0, h3: f64 = 0

/** One chunk exactly as TruePeakMeter.scan does it; lo and hi are the chunk's own extremes. */
function scalarChunk(x: usize, n: i32, firstOutput: i32, c: i32, lo: f64, hi: f64, running: f64): f64 {
  let peak = running
  const m = hi > -lo ? hi : -lo
  peak = m > peak ? m : peak
  const wl = min(min(l1, l2), min(l3, lo))
  const wh = max(max(h1, h2), max(h3, hi))
  const mid = 0.5 * abs(wh + wl)
  const half = 0.5 * (wh - wl)
  const inner = mid * innerGain + half * innerAbsGain
  const outer = mid * outerGain + half * outerAbsGain
  if (inner > peak || outer > peak) {
    const start = max(firstOutput, HISTORY + c * CHUNK)
    const end = min(n, HISTORY + (c + 1) * CHUNK)
    // A whole chunk of outputs (taps x[start − 11 .. start + 3], all inside the window of chunks
    // c−3..c that wl and wh span) is first screened in f32.
    const whole = end - start == CHUNK && start == HISTORY + c * CHUNK
    const wmax = max(abs(wl), abs(wh))
    if (start < end && !(whole && <f64>approxChunk(x, start) + APPROX_ERR * innerAbsGain * wmax <= peak)) {
      if (inner > peak) peak = interpolateInner2(x, start, end, peak)
      if (outer > peak) peak = interpolateOuter2(x, start, end, peak)
    }
  }
  l3 = l2
  h3 = h2
  l2 = l1
  h2 = h1
  l1 = lo
  h1 = hi
  return peak
}

function chunkExtremes(x: usize, n: i32, c: i32, hiWanted: bool): f64 {
  let l: f64 = Infinity
  let h: f64 = -Infinity
  const end = min(n, HISTORY + (c + 1) * CHUNK)
  for (let i = HISTORY + c * CHUNK; i < end; i++) {
    const v = at(x, i)
    l = min(l, v)
    h = max(h, v)
  }
  return hiWanted ? h : l
}

/**
 * Largest |value| of the samples x[HISTORY..n) and of the interpolated points whose taps lie on
 * x[realFrom..n), given the running maximum. Outputs start at firstOutput.
 */
export function scan(x: usize, n: i32, realFrom: i32, firstOutput: i32, running: f64): f64 {
  let headLo: f64 = Infinity
  let headHi: f64 = -Infinity
  for (let j = realFrom; j < HISTORY; j++) {
    headLo = min(headLo, at(x, j))
    headHi = max(headHi, at(x, j))
  }
  l1 = headLo
  h1 = headHi
  l2 = headLo
  h2 = headHi
  l3 = headLo
  h3 = headHi
  let peak = running
  const chunks = (n - HISTORY + CHUNK - 1) / CHUNK
  const whole = (n - HISTORY) / CHUNK // chunks of four real samples
  // Chunks before cs may have outputs before firstOutput: scalar path (only at the start of a take).
  let c = 0
  const cs = min(whole, max(0, (firstOutput - HISTORY + CHUNK - 1) / CHUNK))
  for (; c < cs; c++) {
    const lo = chunkExtremes(x, n, c, false)
    const hi = chunkExtremes(x, n, c, true)
    storeExtremes(c, lo, hi)
    peak = scalarChunk(x, n, firstOutput, c, lo, hi, peak)
  }

  // Groups of four chunks (16 samples) in SIMD lanes.
  const ig = f32x4.splat(<f32>innerGain * SAFE)
  const iag = f32x4.splat(<f32>innerAbsGain * SAFE)
  const og = f32x4.splat(<f32>outerGain * SAFE)
  const oag = f32x4.splat(<f32>outerAbsGain * SAFE)
  const halfV = f32x4.splat(0.5)
  // Lanes 1..3: the lows and highs of chunks c−3, c−2, c−1 (lane 0 is not read).
  let prevLo = f32x4(0, <f32>l3, <f32>l2, <f32>l1)
  let prevHi = f32x4(0, <f32>h3, <f32>h2, <f32>h1)
  for (; c + 4 <= whole; c += 4) {
    const p = x + (<usize>(HISTORY + c * CHUNK) << 2)
    const a = v128.load(p)
    const b = v128.load(p, 16)
    const d = v128.load(p, 32)
    const e = v128.load(p, 48)
    // Transpose: r_k holds sample k of each of the four chunks.
    const t0 = v128.shuffle<i32>(a, b, 0, 4, 1, 5)
    const t1 = v128.shuffle<i32>(a, b, 2, 6, 3, 7)
    const t2 = v128.shuffle<i32>(d, e, 0, 4, 1, 5)
    const t3 = v128.shuffle<i32>(d, e, 2, 6, 3, 7)
    const r0 = v128.shuffle<i32>(t0, t2, 0, 1, 4, 5)
    const r1 = v128.shuffle<i32>(t0, t2, 2, 3, 6, 7)
    const r2 = v128.shuffle<i32>(t1, t3, 0, 1, 4, 5)
    const r3 = v128.shuffle<i32>(t1, t3, 2, 3, 6, 7)
    const lo = f32x4.min(f32x4.min(r0, r1), f32x4.min(r2, r3))
    const hi = f32x4.max(f32x4.max(r0, r1), f32x4.max(r2, r3))
    if (loOut != 0) {
      v128.store(loOut + (<usize>c << 2), lo)
      v128.store(hiOut + (<usize>c << 2), hi)
    }
    // Window of chunk k: chunks k−3..k.
    const wl = f32x4.min(
      f32x4.min(lo, v128.shuffle<i32>(prevLo, lo, 3, 4, 5, 6)),
      f32x4.min(v128.shuffle<i32>(prevLo, lo, 2, 3, 4, 5), v128.shuffle<i32>(prevLo, lo, 1, 2, 3, 4)),
    )
    const wh = f32x4.max(
      f32x4.max(hi, v128.shuffle<i32>(prevHi, hi, 3, 4, 5, 6)),
      f32x4.max(v128.shuffle<i32>(prevHi, hi, 2, 3, 4, 5), v128.shuffle<i32>(prevHi, hi, 1, 2, 3, 4)),
    )
    const mid = f32x4.abs(f32x4.mul(halfV, f32x4.add(wh, wl)))
    const half = f32x4.mul(halfV, f32x4.sub(wh, wl))
    const inner = f32x4.add(f32x4.mul(mid, ig), f32x4.mul(half, iag))
    const outer = f32x4.add(f32x4.mul(mid, og), f32x4.mul(half, oag))
    const m = f32x4.max(hi, f32x4.neg(lo))
    // The running maximum in f32, rounded down, so no lane is let off by the rounding.
    let pkf = <f32>peak
    if (<f64>pkf > peak) pkf = reinterpret<f32>(reinterpret<u32>(pkf) - 1)
    const pk = f32x4.splat(pkf)
    const hot = v128.or(v128.or(f32x4.gt(inner, pk), f32x4.gt(outer, pk)), f32x4.gt(m, pk))
    // Where only the bound is over, the f32 screen of all 16 outputs decides, in lanes. Every tap of
    // these outputs lies in the window of its chunk (the same reasoning as in scalarChunk), so the
    // largest |sample| of the four windows sizes the margin; computed in f32, the margin and the sum
    // round by about 2^-24 of themselves, far inside the factor of eight APPROX_ERR keeps spare.
    if (
      v128.any_true(hot) &&
      (v128.any_true(f32x4.gt(m, pk)) || groupOver(x, HISTORY + c * CHUNK, f32x4.max(f32x4.abs(wl), f32x4.abs(wh)), pk))
    ) {
      // Scalar path for these four chunks, from the same lows and highs.
      l1 = <f64>f32x4.extract_lane(prevLo, 3)
      h1 = <f64>f32x4.extract_lane(prevHi, 3)
      l2 = <f64>f32x4.extract_lane(prevLo, 2)
      h2 = <f64>f32x4.extract_lane(prevHi, 2)
      l3 = <f64>f32x4.extract_lane(prevLo, 1)
      h3 = <f64>f32x4.extract_lane(prevHi, 1)
      peak = scalarChunk(x, n, firstOutput, c, <f64>f32x4.extract_lane(lo, 0), <f64>f32x4.extract_lane(hi, 0), peak)
      peak = scalarChunk(x, n, firstOutput, c + 1, <f64>f32x4.extract_lane(lo, 1), <f64>f32x4.extract_lane(hi, 1), peak)
      peak = scalarChunk(x, n, firstOutput, c + 2, <f64>f32x4.extract_lane(lo, 2), <f64>f32x4.extract_lane(hi, 2), peak)
      peak = scalarChunk(x, n, firstOutput, c + 3, <f64>f32x4.extract_lane(lo, 3), <f64>f32x4.extract_lane(hi, 3), peak)
    }
    prevLo = lo
    prevHi = hi
  }
  l1 = <f64>f32x4.extract_lane(prevLo, 3)
  h1 = <f64>f32x4.extract_lane(prevHi, 3)
  l2 = <f64>f32x4.extract_lane(prevLo, 2)
  h2 = <f64>f32x4.extract_lane(prevHi, 2)
  l3 = <f64>f32x4.extract_lane(prevLo, 1)
  h3 = <f64>f32x4.extract_lane(prevHi, 1)
  // The rest (fewer than four chunks, the last maybe partial): scalar.
  for (; c < chunks; c++) {
    const lo = chunkExtremes(x, n, c, false)
    const hi = chunkExtremes(x, n, c, true)
    storeExtremes(c, lo, hi)
    peak = scalarChunk(x, n, firstOutput, c, lo, hi, peak)
  }
  return peak
}

/**
 * The same search over consecutive stretches of `stretch` frames, each started afresh at
 * `threshold`: out[s] (f64) is the Annex peak of stretch s when it exceeds the threshold, else the
 * threshold. The high-accuracy search (../precise-true-peak.ts) looks only where out[s] is high.
 */
export function scanStretches(x: usize, n: i32, realFrom: i32, firstOutput: i32, threshold: f64, stretch: i32, out: usize): void {
  const frames = n - HISTORY
  const lo = loOut
  const hi = hiOut
  let s: i32 = 0
  for (let from: i32 = 0; from < frames; from += stretch) {
    const len = min(stretch, frames - from)
    const rf = max(0, realFrom - from)
    const fo = max(HISTORY, firstOutput - from)
    // Each stretch is scanned from its own start: its chunks' extremes go at its first chunk (stretch is a multiple of CHUNK).
    if (lo != 0) setExtremesOut(lo + (<usize>(from / CHUNK) << 2), hi + (<usize>(from / CHUNK) << 2))
    store<f64>(out + (<usize>s << 3), scan(x + (<usize>from << 2), len + HISTORY, rf, fo, threshold))
    s++
  }
  setExtremesOut(lo, hi)
}
