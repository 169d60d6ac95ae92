// Byte layout of the files we write, shared by the streaming writer and encodeWav:
//   RIFF|RF64|BW64 <size> WAVE
//   JUNK(28) for RIFF — space for a ds64 should the take pass 4 GiB (EBU Tech 3306 §3.3)
//   or ds64(28) for RF64/BW64 (riffSize, dataSize, sampleCount, table length 0)
//   fmt  (16 PCM, 18 float, 40 extensible)   fact (float only, WAVEFORMATEX rule for non-PCM)
//   bext (reserved at full size, patched on close)   iXML
//   data … [pad]   then LIST/INFO, cue , LIST/adtl, smpl
// In RF64/BW64 every 32-bit size that ds64 covers holds 0xFFFFFFFF (Tech 3306).
import { chunk, encodeAdtl, encodeCue, encodeInfo, encodeSmpl } from './wav-chunks'
import { encodeBext, bextSize, type BextInput } from './wav-bext'
import {
  FORMAT_EXTENSIBLE,
  FORMAT_FLOAT,
  FORMAT_PCM,
  MAX_CHANNELS,
  MAX_RATE,
  MIN_RATE,
  SUBFORMAT_TAIL,
} from './wav-fmt'

export type { BextInput } from './wav-bext'

export interface WavWriteOptions {
  sampleRate: number
  channels: number
  encoding: 'pcm' | 'float'
  bitsPerSample: 8 | 16 | 24 | 32 | 64
  validBitsPerSample?: number
  extensible?: boolean
  channelMask?: number
  /** RIFF by default; a RIFF take that passes 4 GiB is promoted to RF64 on close. */
  container?: 'RIFF' | 'RF64' | 'BW64'
  /** TPDF dither (±1 LSB triangular, seeded PRNG) for 8/16/24-bit PCM; default 'none'. */
  dither?: 'tpdf' | 'none'
  /** Seed of the dither PRNG, for reproducible renders (default fixed). */
  ditherSeed?: number
  bext?: BextInput
  ixml?: string
  info?: Record<string, string>
  cues?: { id: number; frame: number; label?: string }[]
  /** smpl loops; end is the last frame of the loop (inclusive), as the smpl chunk stores it. */
  loops?: { start: number; end: number; type?: number }[]
  /** A control signal (a modulation source), not audio: any whole rate from 1 Hz up is allowed. */
  controlRate?: boolean
  /** Tests of malformed input only: the value put in the data size field (e.g. 0 or 0xFFFFFFFF). */
  dataSizeOverride?: number
}

const U32 = 0xffffffff
export const DS64_PAYLOAD = 28
/** Room for coding history appended by updateBext after open. */
export const BEXT_HISTORY_RESERVE = 512

export interface Plan {
  header: Buffer
  container: 'RIFF' | 'RF64' | 'BW64'
  blockAlign: number
  bits: number
  validBits: number
  /** Offset of the JUNK/ds64 chunk header. */
  ds64At: number
  factAt: number | null
  bextAt: number | null
  bextSize: number
  dataSizeAt: number
  dataOffset: number
}

export function validateOptions(o: WavWriteOptions): void {
  const int = (v: number) => Number.isInteger(v)
  if (!int(o.sampleRate) || o.sampleRate < (o.controlRate ? 1 : MIN_RATE) || o.sampleRate > MAX_RATE)
    throw new RangeError(`sample rate ${o.sampleRate} outside ${MIN_RATE}..${MAX_RATE}`)
  if (!int(o.channels) || o.channels < 1 || o.channels > MAX_CHANNELS)
    throw new RangeError(`channels ${o.channels} outside 1..${MAX_CHANNELS}`)
  const okBits = o.encoding === 'float' ? [32, 64] : [8, 16, 24, 32]
  if (!okBits.includes(o.bitsPerSample))
    throw new RangeError(`${o.bitsPerSample}-bit ${o.encoding} is not a valid encoding`)
  const vb = o.validBitsPerSample ?? o.bitsPerSample
  if (!int(vb) || vb < 1 || vb > o.bitsPerSample || (o.encoding === 'float' && vb !== o.bitsPerSample))
    throw new RangeError(`valid bits ${vb} not possible in ${o.bitsPerSample}-bit ${o.encoding}`)
}

function fmtPayload(o: WavWriteOptions, validBits: number, blockAlign: number): { tag: number; buf: Buffer } {
  const ext = o.extensible || validBits !== o.bitsPerSample || (o.channelMask ?? 0) !== 0
  const sub = o.encoding === 'float' ? FORMAT_FLOAT : FORMAT_PCM
  const b = Buffer.alloc(ext ? 40 : sub === FORMAT_FLOAT ? 18 : 16)
  const tag = ext ? FORMAT_EXTENSIBLE : sub
  b.writeUInt16LE(tag, 0)
  b.writeUInt16LE(o.channels, 2)
  b.writeUInt32LE(o.sampleRate, 4)
  b.writeUInt32LE(o.sampleRate * blockAlign, 8)
  b.writeUInt16LE(blockAlign, 12)
  b.writeUInt16LE(o.bitsPerSample, 14)
  if (b.length > 16) b.writeUInt16LE(b.length - 18, 16) // cbSize
  if (ext) {
    b.writeUInt16LE(validBits, 18)
    b.writeUInt32LE((o.channelMask ?? 0) >>> 0, 20)
    b.writeUInt16LE(sub, 24)
    SUBFORMAT_TAIL.copy(b, 26)
  }
  return { tag, buf: b }
}

export function planLayout(o: WavWriteOptions): Plan {
  validateOptions(o)
  const container = o.container ?? 'RIFF'
  const validBits = o.validBitsPerSample ?? o.bitsPerSample
  const blockAlign = o.channels * (o.bitsPerSample / 8)
  const parts: Buffer[] = []
  let at = 0
  const push = (b: Buffer) => {
    parts.push(b)
    at += b.length
  }
  const top = Buffer.alloc(12)
  top.write(container, 0, 4, 'latin1')
  top.write('WAVE', 8, 4, 'latin1')
  push(top)
  const ds64At = at
  push(chunk(container === 'RIFF' ? 'JUNK' : 'ds64', Buffer.alloc(DS64_PAYLOAD)))
  const fmt = fmtPayload(o, validBits, blockAlign)
  push(chunk('fmt ', fmt.buf))
  let factAt: number | null = null
  if (o.encoding === 'float') {
    factAt = at
    push(chunk('fact', Buffer.alloc(4)))
  }
  let bextAt: number | null = null
  let bSize = 0
  if (o.bext) {
    bextAt = at
    bSize = bextSize(o.bext.codingHistory) + BEXT_HISTORY_RESERVE
    push(chunk('bext', encodeBext(o.bext, bSize)))
  }
  if (o.ixml !== undefined) push(chunk('iXML', Buffer.from(o.ixml, 'utf8')))
  const dataSizeAt = at + 4
  const dh = Buffer.alloc(8)
  dh.write('data', 0, 4, 'latin1')
  push(dh)
  return {
    header: Buffer.concat(parts),
    container,
    blockAlign,
    bits: o.bitsPerSample,
    validBits,
    ds64At,
    factAt,
    bextAt,
    bextSize: bSize,
    dataSizeAt,
    dataOffset: at,
  }
}

/** Chunks written after the data (and its pad byte). */
export function trailer(o: WavWriteOptions): Buffer {
  const parts: Buffer[] = []
  if (o.info && Object.keys(o.info).length) parts.push(encodeInfo(o.info))
  if (o.cues && o.cues.length) {
    parts.push(encodeCue(o.cues))
    const adtl = encodeAdtl(o.cues)
    if (adtl) parts.push(adtl)
  }
  if (o.loops && o.loops.length) parts.push(encodeSmpl(o.loops, o.sampleRate))
  return Buffer.concat(parts)
}

export interface Patch {
  at: number
  bytes: Buffer
}

function u32(v: number): Buffer {
  const b = Buffer.alloc(4)
  b.writeUInt32LE(v >>> 0)
  return b
}

/**
 * The header fields to overwrite once sizes are known. A RIFF plan whose file passes
 * 4 GiB becomes RF64: magic renamed, JUNK turned into ds64, 32-bit sizes set to 0xFFFFFFFF.
 */
export function finalPatches(p: Plan, o: WavWriteOptions, frames: number, fileSize: number, bext?: BextInput): Patch[] {
  const dataBytes = frames * p.blockAlign
  const riffSize = fileSize - 8
  const wide = p.container !== 'RIFF' || riffSize > U32
  const container = p.container === 'RIFF' && wide ? 'RF64' : p.container
  const dataField = o.dataSizeOverride
  const patches: Patch[] = []
  if (!wide) {
    patches.push({ at: 4, bytes: u32(riffSize) }, { at: p.dataSizeAt, bytes: u32(dataField ?? dataBytes) })
  } else {
    const ds = Buffer.alloc(8 + DS64_PAYLOAD)
    ds.write('ds64', 0, 4, 'latin1')
    ds.writeUInt32LE(DS64_PAYLOAD, 4)
    ds.writeBigUInt64LE(BigInt(riffSize), 8)
    ds.writeBigUInt64LE(BigInt(dataField ?? dataBytes), 16)
    ds.writeBigUInt64LE(BigInt(frames), 24)
    // table length (at 32) stays 0: no other chunk passes 4 GiB
    patches.push(
      { at: 0, bytes: Buffer.from(container, 'latin1') },
      { at: 4, bytes: u32(U32) },
      { at: p.ds64At, bytes: ds },
      { at: p.dataSizeAt, bytes: u32(U32) },
    )
  }
  if (p.factAt !== null) patches.push({ at: p.factAt + 8, bytes: u32(frames > U32 ? U32 : frames) })
  if (p.bextAt !== null && bext) patches.push({ at: p.bextAt + 8, bytes: encodeBext(bext, p.bextSize) })
  return patches
}

export function applyPatches(buf: Buffer, patches: Patch[]): void {
  for (const x of patches) x.bytes.copy(buf, x.at)
}
