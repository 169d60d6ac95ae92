// The mono mix the character excerpts, the glyph's windows and a region's frames are measured on.

/**
 * dst[at..] = the mean of the channels over planar[·][from..to). Its own function with a stereo path:
 * a per-sample loop over the channels inside a block loop stayed unoptimised and cost as much as the FFTs.
 */
export function meanOfChannels(
  dst: Float32Array | Float64Array,
  at: number,
  planar: Float32Array[],
  from: number,
  to: number,
): void {
  const channels = planar.length
  if (channels === 2) {
    const l = planar[0]
    const r = planar[1]
    for (let i = from, j = at; i < to; i++, j++) dst[j] = (l[i] + r[i]) / 2
    return
  }
  for (let i = from, j = at; i < to; i++, j++) {
    let s = 0
    for (let ch = 0; ch < channels; ch++) s += planar[ch][i]
    dst[j] = s / channels
  }
}
