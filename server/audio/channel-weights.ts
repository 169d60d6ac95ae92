// Loudness weight of each channel (ITU-R BS.1770-4 §2 and Table 4): 1.0 for
// front channels, 1.41 for surround channels, 0 for LFE (excluded).
//
// Channels are identified by the WAVE_FORMAT_EXTENSIBLE speaker mask: the n-th
// channel is the n-th set bit. Side left/right are surrounds (±90–110°). Back
// left/right are the surrounds of a 4.0/5.1 layout that has no side pair; when
// side channels are present too (7.1) the back pair sits at ±135–150°, outside
// the surround zone, and weighs 1.0. Channels beyond the mask weigh 1.0.
//
// Without a mask (0) the layout follows the channel count: 1 mono, 2 L R,
// 3 L R C, 4 L R Ls Rs, 5 L R C Ls Rs (the order of EBU Tech 3341 case 6),
// 6 L R C LFE Ls Rs, 8 L R C LFE Lb Rb Ls Rs (the WAVE default orders);
// any other count weighs every channel 1.0.

const LOW_FREQUENCY = 0x8
const BACK_LEFT = 0x10
const BACK_RIGHT = 0x20
const SIDE_LEFT = 0x200
const SIDE_RIGHT = 0x400

const SURROUND = 1.41

const DEFAULT_WEIGHTS: Record<number, number[]> = {
  1: [1],
  2: [1, 1],
  3: [1, 1, 1],
  4: [1, 1, SURROUND, SURROUND],
  5: [1, 1, 1, SURROUND, SURROUND],
  6: [1, 1, 1, 0, SURROUND, SURROUND],
  8: [1, 1, 1, 0, 1, 1, SURROUND, SURROUND],
}

export function channelWeights(channels: number, channelMask: number): number[] {
  if (channelMask === 0) return DEFAULT_WEIGHTS[channels] ?? new Array<number>(channels).fill(1)
  const hasSides = (channelMask & (SIDE_LEFT | SIDE_RIGHT)) !== 0
  const weights: number[] = []
  for (let bit = 0; bit < 32 && weights.length < channels; bit++) {
    const speaker = 2 ** bit
    if ((channelMask & speaker) === 0) continue
    if (speaker === LOW_FREQUENCY) weights.push(0)
    else if (speaker === SIDE_LEFT || speaker === SIDE_RIGHT) weights.push(SURROUND)
    else if (speaker === BACK_LEFT || speaker === BACK_RIGHT) weights.push(hasSides ? 1 : SURROUND)
    else weights.push(1)
  }
  while (weights.length < channels) weights.push(1)
  return weights
}
