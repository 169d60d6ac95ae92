// Spectrogram images of a take (or of an excerpt of it), as PNG bytes.
//
// Time axis: exactly `width` columns spanning [start, end) of the take; column x
// covers start + x·(end − start)/width up to the next column, so the image lines
// up with a waveform drawn over the same span. Each column is the mean of the
// power spectra of a few Hann-windowed FFT frames of the mono mix (mean of the
// channels, mean removed per frame) centred evenly inside the column's time span;
// a frame longer than the column reaches into its neighbours, and frames are
// shifted inside the take at its two ends. Only the samples those frames cover
// are read (readFrames with startFrame/endFrame per run of overlapping frames),
// so an hour-long take costs a few thousand short reads, not a full decode, and
// memory stays bounded (one run of at most CHUNK_FRAMES samples plus the image).
//
// Two resolutions, chosen by the span shown:
//   overview (span > 30 s): FFT of ≈ sampleRate/12 samples (4096 at 48 kHz,
//     11.7 Hz bins), up to 4 frames per column tiling the column.
//   detail (span ≤ 30 s, the excerpt view): FFT twice as long (8192 at 48 kHz,
//     5.9 Hz bins) and frames at most a quarter frame apart (≥ 75 % overlap),
//     up to 8 per column.
//
// Frequency axis: row 0 is the top; the bottom row is the lowest frequency.
// Row r counted from the bottom (r = height − 1 − y) covers
//   log:    [minHz·(maxHz/minHz)^(r/height), minHz·(maxHz/minHz)^((r+1)/height))
//   linear: [minHz + (maxHz − minHz)·r/height, minHz + (maxHz − minHz)·(r+1)/height)
// with minHz 20 Hz (log) or 0 Hz (linear) and maxHz the Nyquist frequency by default.
// A pixel shows the strongest FFT bin whose centre lies in its row, or, for rows
// narrower than a bin, the power interpolated between the two bins around the
// row's centre frequency (whichever is larger), so a narrow tone reads at its
// level whatever the row width.
//
// Scaling: level = 10·log10(P / (Σw/2)²), P the bin's mean |X_k|², w the Hann
// window. A full-scale sine (amplitude 1) on a bin centre reads 0 dBFS (up to
// 1.4 dB less between bins); a sine in one channel of a stereo take reads −6 dB
// because of the mono mix. Levels map linearly from floorDb (default −110 dBFS)
// to 0 dBFS onto the colour ramp below; anything at or under the floor (digital
// silence included) is the first stop, anything at or above 0 dBFS the last.
import FFT from 'fft.js'
import { PNG } from 'pngjs'
import { probeWav, readFrames, type WavInfo } from './wav-reader'

export type SpectrogramScaleKind = 'log' | 'linear'

export interface SpectrogramOptions {
  width: number
  height: number
  startSeconds?: number
  endSeconds?: number
  minHz?: number
  maxHz?: number
  scale?: SpectrogramScaleKind
  floorDb?: number
}

/** The colour ramp, from the floor (first) to 0 dBFS (last), evenly spaced. */
export const SPECTROGRAM_COLOURS = ['#131518', '#3a2a22', '#8c4f26', '#c8773b', '#e0a56e', '#f6e7c8'] as const
export const DEFAULT_FLOOR_DB = -110
export const DEFAULT_LOG_MIN_HZ = 20
/** Spans up to this long get the detailed resolution. */
export const DETAIL_SPAN_SECONDS = 30

const CHUNK_FRAMES = 1 << 20
const READ_BLOCK_FRAMES = 65536
const LUT_SIZE = 1024
const MIN_FFT = 64

export interface SpectrogramPlan {
  sampleRate: number
  fftSize: number
  framesPerColumn: number
  detail: boolean
  startFrame: number
  endFrame: number
  minHz: number
  maxHz: number
}

function pow2Near(v: number): number {
  return 2 ** Math.round(Math.log2(Math.max(1, v)))
}

function hexRgb(hex: string): [number, number, number] {
  const n = parseInt(hex.slice(1), 16)
  return [(n >> 16) & 255, (n >> 8) & 255, n & 255]
}

/** LUT_SIZE RGB entries over 0..1 of the ramp, linearly interpolated between stops. */
function colourTable(): Uint8Array {
  const stops = SPECTROGRAM_COLOURS.map(hexRgb)
  const lut = new Uint8Array(LUT_SIZE * 3)
  for (let i = 0; i < LUT_SIZE; i++) {
    const t = (i / (LUT_SIZE - 1)) * (stops.length - 1)
    const a = Math.min(stops.length - 2, Math.floor(t))
    const f = t - a
    for (let c = 0; c < 3; c++) lut[i * 3 + c] = Math.round(stops[a][c] + (stops[a + 1][c] - stops[a][c]) * f)
  }
  return lut
}

const LUT = colourTable()

/** The RGB a level (dBFS) is drawn in, for a given floor. */
export function spectrogramColour(db: number, floorDb = DEFAULT_FLOOR_DB): [number, number, number] {
  const i = lutIndex(db, floorDb)
  return [LUT[i * 3], LUT[i * 3 + 1], LUT[i * 3 + 2]]
}

function lutIndex(db: number, floorDb: number): number {
  if (!(db > floorDb)) return 0 // also NaN and −Infinity (silence)
  if (db >= 0) return LUT_SIZE - 1
  return Math.round(((db - floorDb) / -floorDb) * (LUT_SIZE - 1))
}

/** The edges of row r (counted from the bottom) of the frequency axis, in Hz. */
export function rowBandHz(
  r: number,
  height: number,
  minHz: number,
  maxHz: number,
  scale: SpectrogramScaleKind,
): [number, number] {
  if (scale === 'log') {
    const ratio = maxHz / minHz
    return [minHz * ratio ** (r / height), minHz * ratio ** ((r + 1) / height)]
  }
  const step = (maxHz - minHz) / height
  return [minHz + step * r, minHz + step * (r + 1)]
}

/** How a take or excerpt will be rendered: FFT size, frames per column, frame range, band. */
export function planSpectrogram(info: WavInfo, opts: SpectrogramOptions): SpectrogramPlan {
  const { width, height } = opts
  if (!Number.isInteger(width) || width < 1 || !Number.isInteger(height) || height < 1) {
    throw new RangeError(`spectrogram size must be whole pixels, got ${width}×${height}`)
  }
  const sr = info.format.sampleRate
  const total = info.format.frames
  const toFrame = (s: number | undefined, dflt: number) =>
    s === undefined ? dflt : Math.min(total, Math.max(0, Math.round(s * sr)))
  const startFrame = toFrame(opts.startSeconds, 0)
  const endFrame = Math.max(startFrame, toFrame(opts.endSeconds, total))
  const detail = (endFrame - startFrame) / sr <= DETAIL_SPAN_SECONDS

  const scale = opts.scale ?? 'log'
  const nyquist = sr / 2
  const minHz = Math.max(0, opts.minHz ?? (scale === 'log' ? DEFAULT_LOG_MIN_HZ : 0))
  const maxHz = Math.min(nyquist, opts.maxHz ?? nyquist)
  if (scale === 'log' && !(minHz > 0)) throw new RangeError('a log frequency axis needs minHz above 0 Hz')
  if (!(maxHz > minHz)) throw new RangeError(`the band ${minHz}–${maxHz} Hz is empty (Nyquist is ${nyquist} Hz)`)

  const base = Math.min(16384, Math.max(256, pow2Near(sr / 12)))
  let fftSize = detail ? base * 2 : base
  while (fftSize > total && fftSize > MIN_FFT) fftSize /= 2
  const span = (endFrame - startFrame) / width
  const hop = detail ? fftSize / 4 : fftSize
  const framesPerColumn = Math.min(detail ? 8 : 4, Math.max(1, Math.ceil(span / hop)))
  return { sampleRate: sr, fftSize, framesPerColumn, detail, startFrame, endFrame, minHz, maxHz }
}

interface RowMap {
  /** First and last bin whose centre lies in the row (kLo > kHi: none). */
  kLo: Int32Array
  kHi: Int32Array
  /** Interpolation at the row's centre frequency: bin k0 and weight of bin k0 + 1. */
  k0: Int32Array
  frac: Float64Array
}

function mapRows(height: number, plan: SpectrogramPlan, scale: SpectrogramScaleKind): RowMap {
  const binHz = plan.sampleRate / plan.fftSize
  const last = plan.fftSize / 2
  const m: RowMap = {
    kLo: new Int32Array(height),
    kHi: new Int32Array(height),
    k0: new Int32Array(height),
    frac: new Float64Array(height),
  }
  for (let r = 0; r < height; r++) {
    const [lo, hi] = rowBandHz(r, height, plan.minHz, plan.maxHz, scale)
    const centre = scale === 'log' ? Math.sqrt(lo * hi) : (lo + hi) / 2
    m.kLo[r] = Math.max(0, Math.ceil(lo / binHz))
    m.kHi[r] = Math.min(last, Math.ceil(hi / binHz) - 1)
    const kf = Math.min(last, centre / binHz)
    m.k0[r] = Math.min(last - 1, Math.floor(kf))
    m.frac[r] = kf - m.k0[r]
  }
  return m
}

/** Start frame of every FFT frame, column after column (non-decreasing). */
function frameStarts(plan: SpectrogramPlan, width: number, total: number): Float64Array {
  const { fftSize: n, framesPerColumn: k, startFrame, endFrame } = plan
  const span = (endFrame - startFrame) / width
  const starts = new Float64Array(width * k)
  const latest = Math.max(0, total - n)
  for (let x = 0; x < width; x++) {
    for (let i = 0; i < k; i++) {
      const centre = startFrame + (x + (i + 0.5) / k) * span
      starts[x * k + i] = Math.min(latest, Math.max(0, Math.round(centre - n / 2)))
    }
  }
  return starts
}

/** Reads the mono mix of frames [from, to) into out (length ≥ to − from). */
async function readMono(path: string, info: WavInfo, from: number, to: number, out: Float32Array): Promise<number> {
  const channels = info.format.channels
  const scale = 1 / channels
  let at = 0
  for await (const block of readFrames(path, info, {
    startFrame: from,
    endFrame: to,
    blockFrames: READ_BLOCK_FRAMES,
  })) {
    const n = block[0].length
    const first = block[0]
    if (channels === 1) out.set(first, at)
    else {
      for (let i = 0; i < n; i++) {
        let v = 0
        for (let c = 0; c < channels; c++) v += block[c][i]
        out[at + i] = v * scale
      }
    }
    at += n
  }
  out.fill(0, at, to - from) // the file shrank since it was probed
  return at
}

/** Renders the spectrogram of a WAV file (see the header for axes and scaling); resolves to PNG bytes. */
export async function renderSpectrogram(path: string, opts: SpectrogramOptions): Promise<Buffer> {
  const info = await probeWav(path)
  const { width, height } = opts
  const scale = opts.scale ?? 'log'
  const floorDb = opts.floorDb ?? DEFAULT_FLOOR_DB
  const plan = planSpectrogram(info, opts)
  const rgb = Buffer.alloc(width * height * 3)
  const floor = [LUT[0], LUT[1], LUT[2]]
  for (let i = 0; i < width * height; i++) rgb.set(floor, i * 3)

  const total = info.format.frames
  const n = plan.fftSize
  if (plan.endFrame > plan.startFrame && total >= MIN_FFT) {
    const rows = mapRows(height, plan, scale)
    const k = plan.framesPerColumn
    const starts = frameStarts(plan, width, total)
    const fft = new FFT(n)
    const out = fft.createComplexArray() as number[]
    const frame = new Float64Array(n)
    const window = new Float64Array(n)
    let windowSum = 0
    for (let i = 0; i < n; i++) {
      window[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / (n - 1))
      windowSum += window[i]
    }
    const reference = (windowSum / 2) ** 2 * k // k: the column's power is a mean of k frames
    const bins = n / 2 + 1
    const power = new Float64Array(bins)
    const chunk = new Float32Array(CHUNK_FRAMES)

    const drawColumn = (x: number) => {
      for (let r = 0; r < height; r++) {
        let p = power[rows.k0[r]] * (1 - rows.frac[r]) + power[rows.k0[r] + 1] * rows.frac[r]
        for (let b = rows.kLo[r]; b <= rows.kHi[r]; b++) if (power[b] > p) p = power[b]
        const li = lutIndex(10 * Math.log10(p / reference), floorDb) * 3
        const o = ((height - 1 - r) * width + x) * 3
        rgb[o] = LUT[li]
        rgb[o + 1] = LUT[li + 1]
        rgb[o + 2] = LUT[li + 2]
      }
      power.fill(0)
    }

    // Runs of frames read in one go: overlapping or nearly adjacent frames (a gap under one
    // frame is cheaper to read through than to seek over), at most CHUNK_FRAMES long.
    let f = 0
    while (f < starts.length) {
      const runStart = starts[f]
      let runEnd = runStart + n
      let g = f + 1
      while (g < starts.length && starts[g] <= runEnd + n && starts[g] + n - runStart <= CHUNK_FRAMES) {
        runEnd = Math.max(runEnd, starts[g] + n)
        g++
      }
      await readMono(path, info, runStart, runEnd, chunk)
      for (; f < g; f++) {
        const s = starts[f] - runStart
        let mean = 0
        for (let i = 0; i < n; i++) mean += chunk[s + i]
        mean /= n
        for (let i = 0; i < n; i++) frame[i] = (chunk[s + i] - mean) * window[i]
        fft.realTransform(out, frame)
        for (let b = 0; b < bins; b++) power[b] += out[2 * b] * out[2 * b] + out[2 * b + 1] * out[2 * b + 1]
        if ((f + 1) % k === 0) drawColumn((f + 1) / k - 1)
      }
    }
  }

  return PNG.sync.write({ width, height, data: rgb } as unknown as PNG, {
    colorType: 2,
    inputColorType: 2,
    inputHasAlpha: false,
    deflateLevel: 6,
  })
}
