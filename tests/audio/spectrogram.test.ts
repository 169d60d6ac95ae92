// Spectrogram images of signals sox generates: the signal's own definition (sox
// synth frequency, level, and where one part ends and the next begins) is the
// reference for which pixel row and column must light up, and how brightly.
// PNG bytes are decoded with pngjs, independently of how they were written.
import { afterAll, describe, expect, it } from 'vitest'
import { PNG } from 'pngjs'
import { renderSpectrogram, SPECTROGRAM_COLOURS, spectrogramColour } from '../../server/audio/spectrogram'
import { makeTmpDir } from '../helpers/audio-files'
import { sox } from '../helpers/reference-tools'

const tmp = makeTmpDir('strayfield-spectrogram-')
afterAll(() => tmp.cleanup())

/** `sox -n … synth SECONDS sine HZ vol DB`: a mono sine at 48 kHz, 24-bit. */
function sine(name: string, hz: number, seconds: number, db = 0, rate = 48000, channels = 1): string {
  const file = tmp.file(`${name}.wav`)
  sox([
    '-n',
    '-r',
    String(rate),
    '-b',
    '24',
    '-c',
    String(channels),
    file,
    'synth',
    String(seconds),
    'sine',
    String(hz),
    'vol',
    `${db}dB`,
  ])
  return file
}

/** Two sox sines one after the other (sox concatenates its inputs). */
function twoPart(name: string, firstHz: number, secondHz: number, secondsEach: number): string {
  const a = sine(`${name}-a`, firstHz, secondsEach, -6)
  const b = sine(`${name}-b`, secondHz, secondsEach, -6)
  const out = tmp.file(`${name}.wav`)
  sox([a, b, out])
  return out
}

interface Image {
  width: number
  height: number
  rgb(x: number, y: number): [number, number, number]
}

function decode(png: Buffer): Image {
  const img = PNG.sync.read(png)
  return {
    width: img.width,
    height: img.height,
    rgb: (x, y) => {
      const o = (y * img.width + x) * 4
      return [img.data[o], img.data[o + 1], img.data[o + 2]]
    },
  }
}

const brightness = ([r, g, b]: [number, number, number]) => r + g + b

function brightestRow(img: Image, x: number): number {
  let best = -1
  let row = -1
  for (let y = 0; y < img.height; y++) {
    const v = brightness(img.rgb(x, y))
    if (v > best) [best, row] = [v, y]
  }
  return row
}

/** The pixel row holding frequency hz, from the documented axis: bottom row = minHz, log-spaced up to maxHz. */
function logRow(hz: number, height: number, minHz: number, maxHz: number): number {
  return height - 1 - Math.floor((height * Math.log(hz / minHz)) / Math.log(maxHz / minHz))
}

function linearRow(hz: number, height: number, minHz: number, maxHz: number): number {
  return height - 1 - Math.floor((height * (hz - minHz)) / (maxHz - minHz))
}

/** The level a pixel shows: the dB whose ramp colour is nearest (−110..0 in 0.1 dB steps). */
function levelOf(rgb: [number, number, number]): number {
  let best = Infinity
  let level = NaN
  for (let db = -110; db <= 0.001; db += 0.1) {
    const c = spectrogramColour(db)
    const d = (c[0] - rgb[0]) ** 2 + (c[1] - rgb[1]) ** 2 + (c[2] - rgb[2]) ** 2
    if (d < best) [best, level] = [d, db]
  }
  return level
}

const hexRgb = (hex: string): [number, number, number] => {
  const n = parseInt(hex.slice(1), 16)
  return [(n >> 16) & 255, (n >> 8) & 255, n & 255]
}

describe('frequency axis', () => {
  it('puts a sox 1 kHz sine (48 kHz) at the pixel row of 1 kHz on the log axis 20 Hz..24 kHz (±1 row)', async () => {
    const img = decode(await renderSpectrogram(sine('sine-1k', 1000, 4), { width: 240, height: 256 }))
    const expected = logRow(1000, 256, 20, 24000)
    for (const x of [10, 120, 230]) expect(Math.abs(brightestRow(img, x) - expected)).toBeLessThanOrEqual(1)
  })

  it('puts sox sines of 60 Hz and 12 kHz at their rows, at a 44.1 kHz rate (log axis to 22.05 kHz)', async () => {
    for (const hz of [60, 12000]) {
      const img = decode(
        await renderSpectrogram(sine(`sine-441-${hz}`, hz, 3, -12, 44100), { width: 100, height: 300 }),
      )
      expect(Math.abs(brightestRow(img, 50) - logRow(hz, 300, 20, 22050))).toBeLessThanOrEqual(1)
    }
  })

  it('follows minHz/maxHz and the linear scale', async () => {
    const file = sine('sine-3k', 3000, 3, -6)
    const lin = decode(await renderSpectrogram(file, { width: 80, height: 200, scale: 'linear' }))
    expect(Math.abs(brightestRow(lin, 40) - linearRow(3000, 200, 0, 24000))).toBeLessThanOrEqual(1)
    const band = decode(
      await renderSpectrogram(file, { width: 80, height: 200, scale: 'log', minHz: 1000, maxHz: 8000 }),
    )
    expect(Math.abs(brightestRow(band, 40) - logRow(3000, 200, 1000, 8000))).toBeLessThanOrEqual(1)
  })
})

describe('levels and colours', () => {
  it('shows a full-scale sox sine at about 0 dBFS, the top of the ramp', async () => {
    const img = decode(await renderSpectrogram(sine('sine-fs', 1000, 3, 0), { width: 60, height: 256 }))
    const level = levelOf(img.rgb(30, logRow(1000, 256, 20, 24000)))
    expect(level).toBeGreaterThan(-2)
  })

  it('shows a sox sine at −40 dBFS at −40 dB (±2 dB)', async () => {
    const img = decode(await renderSpectrogram(sine('sine-40', 1000, 3, -40), { width: 60, height: 256 }))
    const x = 30
    const level = levelOf(img.rgb(x, brightestRow(img, x)))
    expect(Math.abs(level + 40)).toBeLessThanOrEqual(2)
  })

  it('renders sox-made digital silence entirely in the floor colour', async () => {
    const file = tmp.file('silence.wav')
    sox(['-n', '-r', '48000', '-b', '16', '-c', '2', file, 'trim', '0', '3'])
    const img = decode(await renderSpectrogram(file, { width: 120, height: 64 }))
    const floor = hexRgb(SPECTROGRAM_COLOURS[0])
    for (let y = 0; y < img.height; y++) for (let x = 0; x < img.width; x++) expect(img.rgb(x, y)).toEqual(floor)
  })
})

describe('time axis', () => {
  // 4 s is drawn at the detailed resolution, 64 s at the overview resolution.
  it.each([2, 32])(
    'moves the energy from 200 Hz to 5 kHz at the middle column (two %d s sox parts)',
    async (secondsEach) => {
      const width = 200
      const img = decode(
        await renderSpectrogram(twoPart(`two-${secondsEach}`, 200, 5000, secondsEach), { width, height: 256 }),
      )
      const low = logRow(200, 256, 20, 24000)
      const high = logRow(5000, 256, 20, 24000)
      const highWins = Array.from(
        { length: width },
        (_, x) => brightness(img.rgb(x, high)) > brightness(img.rgb(x, low)),
      )
      const flip = highWins.indexOf(true)
      expect(Math.abs(flip - width / 2)).toBeLessThanOrEqual(1)
      expect(highWins.slice(0, flip).every((v) => !v)).toBe(true)
      expect(highWins.slice(flip).every((v) => v)).toBe(true)
      expect(Math.abs(brightestRow(img, 10) - low)).toBeLessThanOrEqual(1)
      expect(Math.abs(brightestRow(img, width - 10) - high)).toBeLessThanOrEqual(1)
    },
  )

  it('maps an excerpt onto the whole width: 4..8 s of a 5 s + 5 s file changes at a quarter of the width', async () => {
    const width = 240
    const file = twoPart('excerpt', 200, 5000, 5)
    const img = decode(await renderSpectrogram(file, { width, height: 128, startSeconds: 4, endSeconds: 8 }))
    const low = logRow(200, 128, 20, 24000)
    const high = logRow(5000, 128, 20, 24000)
    const flip = Array.from(
      { length: width },
      (_, x) => brightness(img.rgb(x, high)) > brightness(img.rgb(x, low)),
    ).indexOf(true)
    // The change at 5 s lies (5 − 4) / (8 − 4) of the way across.
    expect(Math.abs(flip - width / 4)).toBeLessThanOrEqual(1)
  })
})

describe('PNG output', () => {
  it('is a PNG of exactly the requested size, read back with pngjs', async () => {
    const png = await renderSpectrogram(sine('stereo', 440, 2, -10, 48000, 2), { width: 317, height: 91 })
    expect(png.subarray(0, 8)).toEqual(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]))
    const img = PNG.sync.read(png)
    expect([img.width, img.height]).toEqual([317, 91])
  })

  it('refuses a band above the Nyquist frequency', async () => {
    await expect(renderSpectrogram(sine('nyq', 440, 1), { width: 64, height: 32, minHz: 30000 })).rejects.toThrow(
      RangeError,
    )
  })
})
