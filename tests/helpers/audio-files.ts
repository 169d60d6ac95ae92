// Shared by the audio tests: temp dirs, hand-built WAVE bytes (independent of our
// writer, so the reader is not only tested against itself), and wrappers around the
// Debian reference tools ffprobe, ffmpeg and soxi.
import { execFileSync } from 'node:child_process'
import { mkdtempSync, rmSync, readdirSync } from 'node:fs'
import { tmpdir } from 'node:os'
import { join } from 'node:path'
import { readFrames, type WavInfo } from '../../server/audio/wav-reader'

export interface TmpDir {
  dir: string
  file(name: string): string
  list(): string[]
  cleanup(): void
}

export function makeTmpDir(prefix = 'strayfield-audio-'): TmpDir {
  const dir = mkdtempSync(join(tmpdir(), prefix))
  return {
    dir,
    file: (name) => join(dir, name),
    list: () => readdirSync(dir),
    cleanup: () => rmSync(dir, { recursive: true, force: true }),
  }
}

// ---- hand-built WAVE files (layout per the RIFF/WAVE specification) ----

export interface RawChunkSpec {
  id: string
  payload: Buffer
  /** Value for the size field when it should lie; default payload length. */
  size?: number
  /** Omit the pad byte after an odd payload (a writer bug seen in the wild). */
  noPad?: boolean
}

export function rawChunk(c: RawChunkSpec): Buffer {
  const h = Buffer.alloc(8)
  h.write(c.id, 0, 4, 'latin1')
  h.writeUInt32LE((c.size ?? c.payload.length) >>> 0, 4)
  const pad = c.payload.length % 2 === 1 && !c.noPad ? Buffer.alloc(1) : Buffer.alloc(0)
  return Buffer.concat([h, c.payload, pad])
}

/** magic + size + WAVE + chunks; riffSize defaults to the true size (or 0xFFFFFFFF for RF64/BW64). */
export function buildWav(chunks: RawChunkSpec[], magic = 'RIFF', riffSize?: number): Buffer {
  const body = Buffer.concat(chunks.map(rawChunk))
  const h = Buffer.alloc(12)
  h.write(magic, 0, 4, 'latin1')
  h.writeUInt32LE((riffSize ?? (magic === 'RIFF' ? body.length + 4 : 0xffffffff)) >>> 0, 4)
  h.write('WAVE', 8, 4, 'latin1')
  return Buffer.concat([h, body])
}

/** WAVEFORMATEX (16 bytes) for tag 1/3, or a 40-byte WAVEFORMATEXTENSIBLE when `ext` is given. */
export function fmtPayload(o: {
  tag?: number
  channels: number
  rate: number
  bits: number
  blockAlign?: number
  ext?: { validBits: number; mask: number; subTag: number }
}): Buffer {
  const b = Buffer.alloc(o.ext ? 40 : 16)
  const align = o.blockAlign ?? o.channels * Math.ceil(o.bits / 8)
  b.writeUInt16LE(o.ext ? 0xfffe : (o.tag ?? 1), 0)
  b.writeUInt16LE(o.channels, 2)
  b.writeUInt32LE(o.rate, 4)
  b.writeUInt32LE(o.rate * align, 8)
  b.writeUInt16LE(align, 12)
  b.writeUInt16LE(o.bits, 14)
  if (o.ext) {
    b.writeUInt16LE(22, 16)
    b.writeUInt16LE(o.ext.validBits, 18)
    b.writeUInt32LE(o.ext.mask, 20)
    b.writeUInt16LE(o.ext.subTag, 24)
    Buffer.from('000000001000800000aa00389b71', 'hex').copy(b, 26)
  }
  return b
}

/** Interleaved 16-bit PCM bytes of integer sample values. */
export function pcm16(values: number[]): Buffer {
  const b = Buffer.alloc(values.length * 2)
  values.forEach((v, i) => b.writeInt16LE(v, i * 2))
  return b
}

// ---- reading everything back ----

export async function readAll(
  path: string,
  info: WavInfo,
  opts?: { blockFrames?: number; startFrame?: number; endFrame?: number },
): Promise<Float32Array[]> {
  const parts: Float32Array[][] = []
  for await (const b of readFrames(path, info, opts)) parts.push(b)
  return Array.from({ length: info.format.channels }, (_, c) => {
    const n = parts.reduce((s, p) => s + p[c].length, 0)
    const out = new Float32Array(n)
    let o = 0
    for (const p of parts) {
      out.set(p[c], o)
      o += p[c].length
    }
    return out
  })
}

// ---- Debian reference tools ----

export interface FfprobeStream {
  codec_name: string
  sample_rate: string
  channels: number
  bits_per_sample: number
  bits_per_raw_sample?: string
  duration_ts?: number
  duration?: string
  channel_layout?: string
  sample_fmt: string
}
export interface FfprobeResult {
  streams: FfprobeStream[]
  format: { format_name: string; duration?: string; size: string; tags?: Record<string, string> }
}

export function ffprobe(path: string): FfprobeResult {
  const out = execFileSync('ffprobe', ['-v', 'error', '-show_streams', '-show_format', '-of', 'json', path], {
    encoding: 'utf8',
  })
  return JSON.parse(out) as FfprobeResult
}

/** ffmpeg's own decode of the first stream as interleaved 32-bit float (-f f32le). */
export function ffmpegF32(path: string): Float32Array {
  const out = execFileSync('ffmpeg', ['-v', 'error', '-i', path, '-f', 'f32le', '-acodec', 'pcm_f32le', '-'], {
    maxBuffer: 1 << 30,
  })
  return new Float32Array(out.buffer.slice(out.byteOffset, out.byteOffset + out.byteLength))
}

export interface Soxi {
  rate: number
  channels: number
  /** Samples per channel, from the "Duration : hh:mm:ss = N samples" line. */
  samples: number
  /** Container bits from "Sample Encoding: 24-bit Signed Integer PCM". */
  bits: number
  /** e.g. "Signed Integer PCM", "Unsigned Integer PCM", "Floating Point PCM". */
  encoding: string
}

/** soxi's plain report (one call), parsed. Throws when sox cannot open the file. */
export function soxi(path: string): Soxi {
  const out = execFileSync('soxi', [path], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] })
  const field = (name: string) => {
    const m = new RegExp(`^${name}\\s*:\\s*(.*)$`, 'm').exec(out)
    if (!m) throw new Error(`soxi printed no ${name}: ${out}`)
    return m[1].trim()
  }
  const enc = /^(\d+)-bit (.*)$/.exec(field('Sample Encoding'))
  const samples = /=\s*(\d+) samples/.exec(field('Duration'))
  if (!enc || !samples) throw new Error(`unexpected soxi report: ${out}`)
  return {
    rate: Number(field('Sample Rate')),
    channels: Number(field('Channels')),
    samples: Number(samples[1]),
    bits: Number(enc[1]),
    encoding: enc[2],
  }
}
