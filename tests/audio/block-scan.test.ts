// BlockScan.scanExtremes (the render meter's pass) must give the very lows and highs
// of scan() (the analysis pass), chunk by chunk, whatever the channel count and
// however the block ends; the true-peak bound reads them and would skip a peak otherwise.
import { describe, expect, it } from 'vitest'
import { BlockScan } from '../../server/audio/block-scan'

function noise(n: number, seed: number): Float32Array {
  const x = new Float32Array(n)
  let s = seed
  for (let i = 0; i < n; i++) {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0
    x[i] = s / 2 ** 31 - 1
  }
  return x
}

describe('BlockScan.scanExtremes', () => {
  for (const [channels, frames] of [[1, 1001], [2, 4096], [2, 4099], [3, 17], [2, 3]] as const) {
    it(`${channels} channel(s), ${frames} frames: the lows and highs of scan()`, () => {
      const planar = Array.from({ length: channels }, (_, c) => noise(frames, 7 + c))
      const full = new BlockScan(channels)
      full.scan(planar)
      const light = new BlockScan(channels)
      light.scanExtremes(planar)
      expect(light.chunks).toBe(full.chunks)
      for (let c = 0; c < channels; c++) {
        expect(Array.from(light.lo[c].subarray(0, light.chunks))).toEqual(Array.from(full.lo[c].subarray(0, full.chunks)))
        expect(Array.from(light.hi[c].subarray(0, light.chunks))).toEqual(Array.from(full.hi[c].subarray(0, full.chunks)))
      }
      // And they are what they say: the extremes of each 4-frame chunk.
      const x = planar[0]
      for (let k = 0; k < light.chunks; k++) {
        const chunk = Array.from(x.subarray(4 * k, 4 * k + 4))
        expect(light.lo[0][k]).toBe(Math.min(...chunk))
        expect(light.hi[0][k]).toBe(Math.max(...chunk))
      }
    })
  }
})
