// Parsing of the WAVE 'fmt ' chunk (WAVEFORMATEX / WAVEFORMATEXTENSIBLE) into
// the few fields the decoder needs. Limits are the product's, not the format's.
import { WavFormatError } from './wav-errors'

export const FORMAT_PCM = 0x0001
export const FORMAT_FLOAT = 0x0003
export const FORMAT_EXTENSIBLE = 0xfffe

export const MIN_RATE = 8000
export const MAX_RATE = 384000
export const MAX_CHANNELS = 8

/** Tail (bytes 2..15) of KSDATAFORMAT_SUBTYPE_PCM / _IEEE_FLOAT: xxxxxxxx-0000-0010-8000-00AA00389B71. */
export const SUBFORMAT_TAIL = Buffer.from([
  0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b, 0x71,
])

// Names for a readable refusal; only a few common tags (common practice).
const TAG_NAMES: Record<number, string> = {
  0x0002: 'ADPCM',
  0x0006: 'A-law',
  0x0007: 'mu-law',
  0x0011: 'ADPCM',
  0x0031: 'GSM 6.10',
  0x0050: 'MPEG',
  0x0055: 'MPEG',
  0x00ff: 'AAC',
  0x1600: 'AAC',
  0x1602: 'AAC',
  0x0000: 'unknown',
}

export interface FmtFields {
  formatTag: number
  encoding: 'pcm' | 'float'
  /** Container width in bits (8, 16, 24, 32, 64): what each sample occupies in the data chunk. */
  bitsPerSample: number
  validBitsPerSample: number
  sampleRate: number
  channels: number
  channelMask: number
  blockAlign: number
}

const hex4 = (n: number) => '0x' + n.toString(16).toUpperCase().padStart(4, '0')

function unsupported(tag: number): WavFormatError {
  const name = TAG_NAMES[tag]
  return new WavFormatError(`unsupported encoding: format tag ${hex4(tag)}${name ? ` (${name})` : ''}`)
}

export function parseFmt(b: Buffer): FmtFields {
  if (b.length < 16) throw new WavFormatError(`fmt chunk too short: ${b.length} bytes, at least 16 needed`)
  const formatTag = b.readUInt16LE(0)
  const channels = b.readUInt16LE(2)
  const sampleRate = b.readUInt32LE(4)
  const blockAlign = b.readUInt16LE(12)
  const declaredBits = b.readUInt16LE(14)
  let tag = formatTag
  let validBits = declaredBits
  let channelMask = 0
  if (formatTag === FORMAT_EXTENSIBLE) {
    if (b.length < 40) throw new WavFormatError(`extensible fmt chunk too short: ${b.length} bytes, 40 needed`)
    validBits = b.readUInt16LE(18) || declaredBits // 0 is written by some tools meaning "all bits"
    channelMask = b.readUInt32LE(20)
    tag = b.readUInt16LE(24)
    if (!b.subarray(26, 40).equals(SUBFORMAT_TAIL)) {
      throw new WavFormatError(
        `unsupported encoding: extensible sub-format ${b.subarray(24, 40).toString('hex')} is neither PCM nor float`,
      )
    }
  }
  if (tag !== FORMAT_PCM && tag !== FORMAT_FLOAT) throw unsupported(tag)
  if (channels < 1 || channels > MAX_CHANNELS)
    throw new WavFormatError(`channels ${channels} outside 1..${MAX_CHANNELS}`)
  if (sampleRate < MIN_RATE || sampleRate > MAX_RATE) {
    throw new WavFormatError(`sample rate ${sampleRate} Hz is outside ${MIN_RATE}..${MAX_RATE}`)
  }
  const encoding = tag === FORMAT_FLOAT ? 'float' : 'pcm'
  let bits = declaredBits
  if (encoding === 'float') {
    if (bits !== 32 && bits !== 64) throw new WavFormatError(`${bits}-bit float is not a valid encoding`)
    validBits = bits
  } else {
    if (bits < 1 || bits > 32) throw new WavFormatError(`${bits}-bit PCM is not supported (1..32 bits)`)
    // Legacy PCM (e.g. 12- or 20-bit) states the significant bits; samples sit left-justified in whole bytes.
    if (formatTag !== FORMAT_EXTENSIBLE) validBits = bits
    bits = Math.ceil(bits / 8) * 8
    // Some writers declare 24 bits but pack each sample in 4 bytes; block align tells the truth then.
    if (blockAlign === channels * 4 && bits === 24) bits = 32
    if (validBits > bits) throw new WavFormatError(`valid bits ${validBits} exceed the ${bits}-bit container`)
  }
  const expected = channels * (bits / 8)
  if (blockAlign !== expected && blockAlign !== 0) {
    throw new WavFormatError(
      `block align ${blockAlign} does not match ${channels} channels of ${bits}-bit samples (${expected})`,
    )
  }
  return {
    formatTag,
    encoding,
    bitsPerSample: bits,
    validBitsPerSample: validBits,
    sampleRate,
    channels,
    channelMask,
    blockAlign: expected,
  }
}
