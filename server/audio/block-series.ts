// A growing list of block powers (10 per second of audio, 8 bytes each: about
// 0.3 MB per hour), kept so that gating is decided block by block, exactly, and
// percentiles come from the sorted values rather than from histogram bins.

export class BlockSeries {
  private values = new Float64Array(1024)
  length = 0

  push(v: number): void {
    if (this.length === this.values.length) {
      const grown = new Float64Array(this.values.length * 2)
      grown.set(this.values)
      this.values = grown
    }
    this.values[this.length++] = v
  }

  /** The values, a view that is valid until the next push. */
  view(): Float64Array {
    return this.values.subarray(0, this.length)
  }
}
