/** A file that is not a WAVE file this product can read; `reason` (also the message) says why in one sentence. */
export class WavFormatError extends Error {
  constructor(public reason: string) {
    super(reason)
    this.name = 'WavFormatError'
  }
}
