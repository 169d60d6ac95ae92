// Seamless loop points in decoded samples (pure; runs on a worker thread).
//
// 1. Periodic material (mains hum, motor drones) is recognised by the
//    normalised autocorrelation (fundamental 20 Hz–1 kHz, peak ≥ 0.5); its
//    period is refined over many periods, and loop lengths are whole numbers
//    of it (rounded to a frame). Other material gets lengths near the one asked.
// 2. Loops start on rising zero crossings of the channels' sum: the pack render
//    moves loop ends to such crossings (server/render/zero-crossing.ts), so a
//    proposal on one is rendered exactly as proposed.
// 3. Each (start, length) is scored by the join: the waveform around the end
//    against the waveform around the start (value and slope, ±1 ms), the step
//    across the join against the material's 99th-percentile step, and the
//    short-term spectrum (1024 frames, about 21 ms at 48 kHz) before the end
//    against the one after the start.
// A join that stays rough gets a crossfade length.

export interface LoopFrames {
  start: number
  end: number
  score: number
  crossfadeMs: number
  /** Fundamental period in frames when the material is periodic. */
  periodFrames: number | null
}

export interface LoopOptions {
  sampleRate: number
  /** Wanted loop length in frames; default: as long as fits. */
  approxLength?: number
  /** Shortest loop in frames. */
  minLength: number
  /** How many proposals (default 3). */
  count?: number
}

const MIN_F0 = 20
const MAX_F0 = 1000
const PERIODIC_R = 0.5
/** Starts tried: periodic material has few candidate ends per start, other material many. */
const MAX_STARTS = { periodic: 1500, other: 300 }
const SPECTRUM_SIZE = 1024

/** |x[i+1] − x[i]| at the given quantile. */
export function stepQuantile(x: Float32Array, q: number): number {
  const d = new Float32Array(Math.max(0, x.length - 1))
  for (let i = 0; i < d.length; i++) d[i] = Math.abs(x[i + 1] - x[i])
  d.sort()
  return d.length ? d[Math.min(d.length - 1, Math.floor(q * d.length))] : 0
}

function correlation(x: Float32Array, from: number, n: number, lag: number): number {
  let xy = 0
  let xx = 0
  let yy = 0
  for (let i = from; i < from + n; i++) {
    const a = x[i]
    const b = x[i + lag]
    xy += a * b
    xx += a * a
    yy += b * b
  }
  return xx > 0 && yy > 0 ? xy / Math.sqrt(xx * yy) : 0
}

/** Vertex of the parabola through (−1, a), (0, b), (1, c). */
const parabolic = (a: number, b: number, c: number) => {
  const d = a - 2 * b + c
  return d < 0 ? (0.5 * (a - c)) / d : 0
}

/** The fundamental period in (fractional) frames, or null for material that is not periodic. */
export function findPeriod(x: Float32Array, sampleRate: number): number | null {
  const minLag = Math.floor(sampleRate / MAX_F0)
  const maxLag = Math.ceil(sampleRate / MIN_F0)
  const n = Math.min(Math.round(0.25 * sampleRate), x.length - maxLag - 1)
  if (n < maxLag) return null
  const from = Math.floor((x.length - maxLag - n) / 2)
  const r = new Float64Array(maxLag + 2)
  let best = -1
  for (let lag = minLag; lag <= maxLag + 1; lag++) {
    r[lag] = correlation(x, from, n, lag)
    if (lag <= maxLag) best = Math.max(best, r[lag])
  }
  if (best < PERIODIC_R) return null
  // The first local maximum close to the best: the fundamental, not a multiple of it.
  let lag0 = -1
  for (let lag = minLag + 1; lag <= maxLag; lag++) {
    if (r[lag] >= 0.9 * best && r[lag] >= r[lag - 1] && r[lag] >= r[lag + 1]) {
      lag0 = lag
      break
    }
  }
  if (lag0 < 0) return null
  let period = lag0 + parabolic(r[lag0 - 1], r[lag0], r[lag0 + 1])
  // Refine over as many periods as fit in half the material: the error shrinks by that count.
  const m = Math.floor((x.length / 2 - maxLag) / period)
  if (m >= 2) {
    const len = Math.min(Math.round(0.25 * sampleRate), x.length - Math.ceil(m * period) - 3)
    if (len > period) {
      const around = Math.round(m * period)
      let lag = around
      let bestR = -2
      for (let l = around - 2; l <= around + 2; l++) {
        const c = correlation(x, 0, len, l)
        if (c > bestR) {
          bestR = c
          lag = l
        }
      }
      const frac = parabolic(correlation(x, 0, len, lag - 1), bestR, correlation(x, 0, len, lag + 1))
      period = (lag + frac) / m
    }
  }
  return period
}

/** In-place radix-2 FFT (re, im of length 2^k). */
function fft(re: Float64Array, im: Float64Array): void {
  const n = re.length
  for (let i = 1, j = 0; i < n; i++) {
    let bit = n >> 1
    for (; j & bit; bit >>= 1) j ^= bit
    j ^= bit
    if (i < j) {
      ;[re[i], re[j]] = [re[j], re[i]]
      ;[im[i], im[j]] = [im[j], im[i]]
    }
  }
  for (let len = 2; len <= n; len <<= 1) {
    const ang = (-2 * Math.PI) / len
    for (let i = 0; i < n; i += len) {
      for (let k = 0; k < len / 2; k++) {
        const wr = Math.cos(ang * k)
        const wi = Math.sin(ang * k)
        const ar = re[i + k + len / 2]
        const ai = im[i + k + len / 2]
        const tr = ar * wr - ai * wi
        const ti = ar * wi + ai * wr
        re[i + k + len / 2] = re[i + k] - tr
        im[i + k + len / 2] = im[i + k] - ti
        re[i + k] += tr
        im[i + k] += ti
      }
    }
  }
}

/** Power spectrum of x[from, from + SPECTRUM_SIZE) under a Hann window. */
function powerSpectrum(x: Float32Array, from: number): Float64Array {
  const re = new Float64Array(SPECTRUM_SIZE)
  const im = new Float64Array(SPECTRUM_SIZE)
  for (let i = 0; i < SPECTRUM_SIZE; i++)
    re[i] = (x[from + i] ?? 0) * (0.5 - 0.5 * Math.cos((2 * Math.PI * i) / SPECTRUM_SIZE))
  fft(re, im)
  const p = new Float64Array(SPECTRUM_SIZE / 2)
  for (let k = 0; k < p.length; k++) p[k] = re[k] * re[k] + im[k] * im[k]
  return p
}

/** Mean |dB difference| of two spectra over the bins within 60 dB of their top, in units of 10 dB. */
function spectralDistance(a: Float64Array, b: Float64Array): number {
  let top = 0
  for (let k = 0; k < a.length; k++) top = Math.max(top, a[k], b[k])
  const floor = top * 1e-6 + 1e-30
  let sum = 0
  let n = 0
  for (let k = 1; k < a.length; k++) {
    if (a[k] < floor && b[k] < floor) continue
    sum += Math.abs(Math.log10((a[k] + floor) / (b[k] + floor)))
    n++
  }
  return n ? sum / n : 0
}

/** Rising zero crossings (x[i−1] < 0 ≤ x[i]) in [lo, hi). */
function risingCrossings(x: Float32Array, lo: number, hi: number): number[] {
  const out: number[] = []
  for (let i = Math.max(1, lo); i < hi; i++) if (x[i - 1] < 0 && x[i] >= 0) out.push(i)
  return out
}

export function findLoops(x: Float32Array, opts: LoopOptions): LoopFrames[] {
  const sr = opts.sampleRate
  const w = Math.max(2, Math.round(0.001 * sr)) // ±1 ms of waveform compared at the join
  const room = x.length - 2 * w - 1 // a loop [a, a + L) needs w frames before a and after a + L
  if (room < opts.minLength) return []
  const p99 = stepQuantile(x, 0.99) || 1e-9
  const period = findPeriod(x, sr)
  const wanted = Math.max(opts.minLength, Math.min(room, opts.approxLength ?? room))

  // Candidate lengths: whole numbers of periods near the wanted length, else the wanted length itself.
  const lengths: number[] = []
  if (period) {
    const n = Math.max(1, Math.round(wanted / period))
    for (const k of [n, n - 1, n + 1, n - 2]) {
      const len = Math.round(k * period)
      if (k >= 1 && len >= opts.minLength && len <= room && !lengths.includes(len)) lengths.push(len)
    }
  }
  if (!lengths.length) lengths.push(Math.round(wanted))
  const shortest = Math.min(...lengths)

  // Candidate starts: rising crossings in the first part of the range (a few periods, at least 0.25 s).
  const span = Math.min(room - shortest, Math.max(Math.round(0.25 * sr), period ? Math.round(4 * period) : 0))
  let starts = risingCrossings(x, w, w + span + 1)
  if (!starts.length) starts = [w]
  const maxStarts = period ? MAX_STARTS.periodic : MAX_STARTS.other
  if (starts.length > maxStarts) starts = starts.filter((_, i) => i % Math.ceil(starts.length / maxStarts) === 0)

  // The end may move to a rising crossing: for periodic material by at most 0.04 ms (the length stays
  // a whole number of periods), for other material back by up to 5 % of the length (at most 20 ms).
  const slack = period
    ? Math.max(1, Math.floor(0.00004 * sr))
    : Math.min(Math.round(0.05 * wanted), Math.round(0.02 * sr))

  interface Cand {
    a: number
    b: number
    wave: number
    step: number
    cost: number
  }
  const cands: Cand[] = []
  for (const a of starts) {
    for (const len of lengths) {
      const target = a + len
      const ends = risingCrossings(x, target - slack, Math.min(target + (period ? slack : 0), x.length - w) + 1)
      if (!ends.length) ends.push(target)
      for (const b of ends) {
        if (b - a < opts.minLength || b + w > x.length) continue
        let diff = 0
        let energy = 0
        for (let k = -w; k < w; k++) {
          const d = x[a + k] - x[b + k]
          diff += d * d
          energy += x[a + k] * x[a + k] + x[b + k] * x[b + k]
        }
        const wave = energy > 0 ? diff / energy : 0
        const step = Math.abs(x[a] - x[b - 1]) / p99
        // Ends off a rising crossing would be moved by the render; ends off whole periods cost a little.
        const offCrossing = x[b - 1] < 0 && x[b] >= 0 ? 0 : 1
        const offPeriod = period ? Math.abs(b - a - len) / (0.0001 * sr) : 0
        cands.push({ a, b, wave, step, cost: wave + 0.1 * Math.max(0, step - 0.5) + offCrossing + offPeriod })
      }
    }
  }
  cands.sort((p, q) => p.cost - q.cost)

  // The spectral term for the best few, then distinct proposals (starts 10 ms apart).
  const scored = cands.slice(0, 40).map((c) => {
    const spec =
      c.b - SPECTRUM_SIZE >= 0 && c.a + SPECTRUM_SIZE <= x.length
        ? spectralDistance(powerSpectrum(x, c.b - SPECTRUM_SIZE), powerSpectrum(x, c.a))
        : 0
    return { ...c, spec, total: c.cost + 0.5 * spec }
  })
  scored.sort((p, q) => p.total - q.total)
  const out: LoopFrames[] = []
  const apart = Math.round(0.01 * sr)
  for (const c of scored) {
    if (out.some((o) => Math.abs(o.start - c.a) < apart && Math.abs(o.end - o.start - (c.b - c.a)) < apart)) continue
    const rough = c.wave > 0.25 || c.step > 1
    out.push({
      start: c.a,
      end: c.b,
      score: Math.round((1 / (1 + 4 * (c.wave + 0.1 * Math.max(0, c.step - 0.5) + 0.5 * c.spec))) * 1000) / 1000,
      crossfadeMs: rough ? Math.round(Math.min(50, Math.max(5, (0.1 * (c.b - c.a) * 1000) / sr))) : 0,
      periodFrames: period,
    })
    if (out.length >= (opts.count ?? 3)) break
  }
  return out
}
