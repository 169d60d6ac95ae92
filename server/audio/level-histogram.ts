// Histogram of block levels with 0.01 dB bins. Each bin keeps the count, the
// exact sum of linear powers and the sum of levels of its blocks, so gated
// means are exact and a percentile is the mean level of the blocks in its bin;
// only which blocks fall on either side of a relative gate is decided per bin.
// Memory is fixed, whatever the length of the take.

export class LevelHistogram {
  readonly counts: Float64Array
  readonly powers: Float64Array
  readonly levels: Float64Array
  private readonly minDb: number
  private readonly step: number

  constructor(minDb: number, maxDb: number, step = 0.01) {
    this.minDb = minDb
    this.step = step
    const bins = Math.ceil((maxDb - minDb) / step)
    this.counts = new Float64Array(bins)
    this.powers = new Float64Array(bins)
    this.levels = new Float64Array(bins)
  }

  get total(): number {
    let n = 0
    for (let i = 0; i < this.counts.length; i++) n += this.counts[i]
    return n
  }

  /** Levels outside the range go to the first or last bin; their power still counts exactly. */
  add(levelDb: number, power: number): void {
    let i = Math.floor((levelDb - this.minDb) / this.step)
    if (i < 0) i = 0
    else if (i >= this.counts.length) i = this.counts.length - 1
    this.counts[i] += 1
    this.powers[i] += power
    this.levels[i] += levelDb
  }

  private centre(i: number): number {
    return this.minDb + (i + 0.5) * this.step
  }

  /** First bin whose centre lies above the threshold (all bins when it is null). */
  private firstBinAbove(thresholdDb: number | null): number {
    if (thresholdDb === null) return 0
    const i = Math.floor((thresholdDb - this.minDb) / this.step)
    if (i < 0) return 0
    return this.centre(i) > thresholdDb ? i : i + 1
  }

  /** Mean linear power and count of the blocks above a threshold. */
  meanPowerAbove(thresholdDb: number | null): { power: number; count: number } {
    let n = 0
    let p = 0
    for (let i = this.firstBinAbove(thresholdDb); i < this.counts.length; i++) {
      n += this.counts[i]
      p += this.powers[i]
    }
    return { power: n > 0 ? p / n : 0, count: n }
  }

  /**
   * Nearest-rank percentile (fraction 0..1) of the blocks above a threshold:
   * the value at sorted index round((n − 1) · fraction), to within the 0.01 dB bin holding it.
   */
  percentile(fraction: number, thresholdDb: number | null = null): number | null {
    const start = this.firstBinAbove(thresholdDb)
    let n = 0
    for (let i = start; i < this.counts.length; i++) n += this.counts[i]
    if (n === 0) return null
    const rank = Math.round((n - 1) * fraction)
    let seen = 0
    for (let i = start; i < this.counts.length; i++) {
      seen += this.counts[i]
      if (seen > rank) return this.levels[i] / this.counts[i]
    }
    return null
  }
}
