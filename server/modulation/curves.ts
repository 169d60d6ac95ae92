// The curves a modulation source is made of, computed over decoded samples
// (planar blocks, −1…1) as they stream past, so an excerpt of any length costs
// one read buffer of memory plus the curve itself. Every curve has one point
// every 1/rateHz seconds from the excerpt's start (round(seconds × rateHz)
// points, at least one), in its natural unit:
//   envelope  peak amplitude of the loudest channel (within ±5 ms), 0…1 of full
//             scale, through a one-pole follower (attack rising, release falling)
//   centroid  spectral centroid of the mono mix, Hz
//   tone      frequency of the strongest spectral peak of the mono mix, Hz
// Centroid and tone come from Hann-windowed FFT frames (≈ 85 ms, at least eight
// frames a window) and are interpolated between frames in octaves; a silent
// frame holds the value before it. Their attack/release is a slew on the octave
// value, so a glide reads the same whatever its register.
import FFT from 'fft.js'

/** One-pole coefficient of time constant `ms` at `rate` samples a second (0 ms: follows at once). */
export const onePole = (ms: number, rate: number) => (ms > 0 ? Math.exp(-1000 / (ms * rate)) : 0)

/** Number of curve points for `frames` samples at `sampleRate`. */
export const curvePoints = (frames: number, sampleRate: number, rateHz: number) =>
  Math.max(1, Math.round((frames / sampleRate) * rateHz))

export interface CurveTracker {
  push(planar: Float32Array[]): void
  /** The curve, in its natural unit. */
  finish(): Float32Array
}

export interface EnvelopeOptions {
  attackMs: number
  releaseMs: number
  rateHz: number
}

/**
 * The peak detector reads the largest |x| within ±HOLD_MS/2 of each sample (the take is there
 * to read ahead: no lag): 10 ms, one period of 100 Hz and the spacing of a rectified 50 Hz hum's
 * peaks, so a steady tone reads its true peak amplitude without the carrier's ripple, whatever
 * the attack. The follower then rises (attack) and falls (release) on it.
 */
export const HOLD_MS = 10

/** Envelope follower of the peak amplitude of the loudest channel. */
export class EnvelopeFollower implements CurveTracker {
  private readonly out: Float32Array
  private readonly a: number
  private readonly r: number
  /** Half the detector's window, in samples: the detector's value for sample n is known at n + half. */
  private readonly half: number
  /** Sliding maximum over the last 2·half + 1 samples: a deque of (index, value) with falling values. */
  private readonly dqIndex: Float64Array
  private readonly dqValue: Float32Array
  private head = 0
  private size = 0
  private env = 0
  private m = 0 // samples read
  private k = 0 // points written
  private next = 0 // sample index of point k

  constructor(
    private readonly sampleRate: number,
    frames: number,
    private readonly o: EnvelopeOptions,
  ) {
    this.out = new Float32Array(curvePoints(frames, sampleRate, o.rateHz))
    this.a = onePole(o.attackMs, sampleRate)
    this.r = onePole(o.releaseMs, sampleRate)
    this.half = Math.max(0, Math.round((HOLD_MS * sampleRate) / 2000))
    this.dqIndex = new Float64Array(2 * this.half + 2)
    this.dqValue = new Float32Array(2 * this.half + 2)
  }

  /** Reads |x| of sample m; the largest of samples m − 2·half … m, the detector's value for sample m − half. */
  private peak(m: number, x: number): number {
    const cap = this.dqIndex.length
    while (this.size > 0 && this.dqValue[(this.head + this.size - 1) % cap] <= x) this.size--
    const tail = (this.head + this.size) % cap
    this.dqIndex[tail] = m
    this.dqValue[tail] = x
    this.size++
    while (this.dqIndex[this.head] < m - 2 * this.half) {
      this.head = (this.head + 1) % cap
      this.size--
    }
    return this.dqValue[this.head]
  }

  /** One more |x|: moves the follower on by the sample `half` before it. */
  private step(x: number): void {
    const p = this.peak(this.m, x)
    const n = this.m++ - this.half
    if (n < 0) return
    // The first point reads the level there, not a rise from silence.
    this.env = n === 0 ? p : p + (p > this.env ? this.a : this.r) * (this.env - p)
    while (this.k < this.out.length && this.next === n) this.emit(this.env)
  }

  push(planar: Float32Array[]): void {
    const len = planar[0]?.length ?? 0
    for (let i = 0; i < len; i++) {
      let x = 0
      for (const ch of planar) {
        const v = Math.abs(ch[i])
        if (v > x) x = v
      }
      this.step(x)
    }
  }

  private emit(v: number): void {
    this.out[this.k++] = v
    this.next = Math.floor((this.k * this.sampleRate) / this.o.rateHz)
  }

  finish(): Float32Array {
    for (let i = 0; i < this.half; i++) this.step(0) // the last samples' windows end with the excerpt
    while (this.k < this.out.length) this.emit(this.env) // points past the last sample hold it
    return this.out
  }
}

export interface SpectralOptions {
  kind: 'centroid' | 'tone'
  attackMs: number
  releaseMs: number
  rateHz: number
}

/** Frames quieter than this (mean square of the mix, dBFS) carry no frequency: the curve holds. */
const SILENT_DBFS = -90
/** tone: peaks below this are not looked for (DC and sub-audio drift). */
const TONE_MIN_HZ = 10

/** Samples of context a SpectralTracker uses on each side of an excerpt: half a frame. */
export const spectralContext = (sampleRate: number) => spectralFrameSize(sampleRate) / 2

/** FFT size for a sample rate: the power of two nearest to 85 ms (4096 at 48 kHz), at least 256. */
export function spectralFrameSize(sampleRate: number): number {
  return Math.max(256, 2 ** Math.round(Math.log2(sampleRate * 0.085)))
}

/**
 * Spectral centroid or strongest tone over time. Frames are centred every `hop` samples from the
 * excerpt's start (an eighth of the frame, or one point apart when points are sparser; points in
 * between are interpolated in octaves). The first
 * `lead` samples pushed come before the excerpt (up to half a frame of the take around an excerpt,
 * see leadFor) and samples pushed past its end are used too, so an excerpt's first and last points
 * see the sound on both sides; beyond what is pushed is silence (a whole take's ends).
 */
export class SpectralTracker implements CurveTracker {
  private readonly size: number
  private readonly hop: number
  private readonly frameCount: number
  private readonly window: Float64Array
  private readonly fft: FFT
  private readonly spectrum: number[]
  private readonly frame: Float64Array
  /** Hz per frame (NaN: silent). */
  private readonly hz: Float64Array
  private done = 0
  /** Mono samples from absolute index bufStart; the frame being filled starts at or after it. */
  private buf: Float64Array
  private bufStart: number
  private bufLen = 0

  constructor(
    private readonly sampleRate: number,
    private readonly frames: number,
    private readonly o: SpectralOptions,
    lead = 0,
  ) {
    this.size = spectralFrameSize(sampleRate)
    // Frames every eighth of a frame (≈ 10 ms), or one per point when points are further apart: the cost follows the audio, not rateHz.
    this.hop = Math.max(this.size / 8, Math.floor(sampleRate / o.rateHz))
    this.frameCount = Math.floor(Math.max(0, frames - 1) / this.hop) + 2 // one frame past the end, for interpolation
    this.hz = new Float64Array(this.frameCount)
    this.window = new Float64Array(this.size)
    for (let i = 0; i < this.size; i++) this.window[i] = 0.5 - 0.5 * Math.cos((2 * Math.PI * i) / this.size)
    this.fft = new FFT(this.size)
    this.spectrum = this.fft.createComplexArray() as number[]
    this.frame = new Float64Array(this.size)
    // The first frame is centred on sample 0: the lead, or zeros where there is none.
    this.bufStart = -this.size / 2
    this.buf = new Float64Array(this.size * 2)
    this.bufLen = this.size / 2 - Math.min(this.size / 2, Math.max(0, Math.floor(lead)))
  }

  push(planar: Float32Array[]): void {
    const len = planar[0]?.length ?? 0
    if (len === 0) return
    this.reserve(len)
    const at = this.bufLen
    const scale = 1 / planar.length
    for (let i = 0; i < len; i++) {
      let s = 0
      for (const ch of planar) s += ch[i]
      this.buf[at + i] = s * scale
    }
    this.bufLen += len
    this.analyseReady()
  }

  private reserve(extra: number): void {
    // Drop what no frame still needs, then grow if the block does not fit.
    // (With frames further apart than a frame, the samples between them are dropped as they come.)
    const drop = Math.min(this.bufLen, this.done * this.hop - this.size / 2 - this.bufStart)
    if (drop > 0) {
      this.buf.copyWithin(0, drop, this.bufLen)
      this.bufLen -= drop
      this.bufStart += drop
    }
    if (this.bufLen + extra > this.buf.length) {
      const grown = new Float64Array(Math.max(this.buf.length * 2, this.bufLen + extra))
      grown.set(this.buf.subarray(0, this.bufLen))
      this.buf = grown
    }
  }

  /** Analyses every frame whose samples are all in the buffer. */
  private analyseReady(): void {
    while (this.done < this.frameCount) {
      const start = this.done * this.hop - this.size / 2 - this.bufStart
      if (start + this.size > this.bufLen) return
      this.hz[this.done++] = this.analyse(this.buf, start)
    }
  }

  private analyse(src: Float64Array, start: number): number {
    const n = this.size
    let mean = 0
    for (let i = 0; i < n; i++) mean += src[start + i]
    mean /= n
    let energy = 0
    for (let i = 0; i < n; i++) {
      const v = src[start + i] - mean
      energy += v * v
      this.frame[i] = v * this.window[i]
    }
    if (10 * Math.log10(energy / n + 1e-300) < SILENT_DBFS) return NaN
    this.fft.realTransform(this.spectrum, this.frame)
    const s = this.spectrum
    const bins = n / 2
    const binHz = this.sampleRate / n
    const power = (k: number) => s[2 * k] * s[2 * k] + s[2 * k + 1] * s[2 * k + 1]
    if (this.o.kind === 'centroid') {
      let num = 0
      let den = 0
      for (let k = 1; k <= bins; k++) {
        const p = power(k)
        num += k * binHz * p
        den += p
      }
      return den > 0 ? num / den : NaN
    }
    const k0 = Math.max(2, Math.ceil(TONE_MIN_HZ / binHz))
    let best = -1
    let kb = -1
    for (let k = k0; k < bins; k++) {
      const p = power(k)
      if (p > best) [best, kb] = [p, k]
    }
    if (kb < 0 || best <= 0) return NaN
    // Parabola through the log powers of the peak bin and its neighbours: the peak's fractional bin.
    const a = Math.log(power(kb - 1) + 1e-300)
    const b = Math.log(best)
    const c = Math.log(power(kb + 1) + 1e-300)
    const d = a - 2 * b + c
    const delta = d < 0 ? Math.max(-0.5, Math.min(0.5, (0.5 * (a - c)) / d)) : 0
    return (kb + delta) * binHz
  }

  finish(): Float32Array {
    // The frames that reach past the end see silence there.
    const pad = this.hop + this.size
    this.reserve(pad)
    this.buf.fill(0, this.bufLen, this.bufLen + pad)
    this.bufLen += pad
    this.analyseReady()
    holdThroughSilence(this.hz)
    const points = curvePoints(this.frames, this.sampleRate, this.o.rateHz)
    const octs = new Float64Array(points)
    for (let k = 0; k < points; k++) {
      const pos = (k * this.sampleRate) / this.o.rateHz / this.hop
      const j = Math.min(this.frameCount - 2, Math.floor(pos))
      const f = pos - j
      octs[k] = Math.log2(this.hz[j]) * (1 - f) + Math.log2(this.hz[j + 1]) * f
    }
    slew(octs, onePole(this.o.attackMs, this.o.rateHz), onePole(this.o.releaseMs, this.o.rateHz))
    return Float32Array.from(octs, (v) => 2 ** v)
  }
}

/** NaN (silent) frames take the value before them; leading ones the first value heard (20 Hz when none is). */
export function holdThroughSilence(hz: Float64Array): void {
  const first = hz.find((v) => Number.isFinite(v)) ?? 20
  let last = first
  for (let i = 0; i < hz.length; i++) {
    if (Number.isFinite(hz[i])) last = hz[i]
    else hz[i] = last
  }
}

/** One-pole smoothing in place: coefficient `up` while rising, `down` while falling. */
export function slew(v: Float64Array, up: number, down: number): void {
  let y = v[0]
  for (let i = 0; i < v.length; i++) {
    const x = v[i]
    y = x + (x > y ? up : down) * (y - x)
    v[i] = y
  }
}

/** The curve's control value 0…1: the envelope itself, or octaves above referenceHz over `octaves`; clamped. */
export function controlFraction(
  value: number,
  source: 'envelope' | 'centroid' | 'tone',
  referenceHz: number,
  octaves: number,
): number {
  const u = source === 'envelope' ? value : Math.log2(value / referenceHz) / octaves
  return Number.isFinite(u) ? Math.min(1, Math.max(0, u)) : 0
}
