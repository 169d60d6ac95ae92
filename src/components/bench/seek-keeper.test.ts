// The keeper against wavesurfer.js's own Player (the code the strip seeks through)
// over a stand-in media element that seeks the way Chromium's does (seen in the
// strip's logs): setting currentTime reads back the new time at once, readyState
// drops to HAVE_METADATA until data at the new place is decoded, 'seeking' arrives
// as a later task, and one 'seeked' (then 'canplay') lands the latest time asked
// (HTML Living Standard, "seeking" algorithm: a new seek aborts a running one).
import { describe, expect, it } from 'vitest'
import Player from 'wavesurfer.js/dist/player.js'
import { keepSeeks } from './seek-keeper'

const HAVE_METADATA = 1
const HAVE_ENOUGH_DATA = 4

class FakeMedia extends EventTarget {
  readyState = HAVE_ENOUGH_DATA
  seeking = false
  duration = 20
  paused = true
  ended = false
  volume = 1
  muted = false
  playbackRate = 1
  seeks = 0
  /** Lands on whole seconds, as a stream that can only start at its own frames might. */
  snap = false
  private time = 0
  private queued: string[] = []
  get currentTime() {
    return this.time
  }
  set currentTime(t: number) {
    this.time = Math.max(0, Math.min(t, this.duration))
    this.seeks += 1
    this.seeking = true
    this.readyState = HAVE_METADATA
    this.queued.push('seeking')
  }
  /** The queued 'seeking' events reach their listeners. */
  deliver() {
    for (const ev of this.queued.splice(0)) this.dispatchEvent(new Event(ev))
  }
  /** The running seek finishes where currentTime stands. */
  land() {
    this.deliver()
    if (!this.seeking) return
    this.seeking = false
    this.readyState = HAVE_ENOUGH_DATA
    if (this.snap) this.time = Math.floor(this.time)
    for (const ev of ['timeupdate', 'seeked', 'canplay']) this.dispatchEvent(new Event(ev))
  }
  /** Lands every seek, including ones asked again while landing. */
  settle() {
    for (let i = 0; i < 10 && (this.seeking || this.queued.length); i++) this.land()
  }
}

function bench(start: number) {
  const media = new FakeMedia()
  media.currentTime = start
  media.settle()
  media.seeks = 0
  const player = new Player({ media: media as unknown as HTMLMediaElement })
  const keeper = keepSeeks(media, {
    setTime: (t) => player.setTime(t),
    position: () => player.getCurrentTime(),
  })
  return { media, player, keeper }
}

describe('seeks on the field strip', () => {
  it('the player alone loses quick steps: a seek held while the element is short of data is dropped', () => {
    const { media, player } = bench(8.5)
    // Three presses of a 0.5 s step, each counting from the player's current time.
    for (let i = 0; i < 3; i++) player.setTime(player.getCurrentTime() + 0.5)
    media.settle()
    // Asked 10.0; the element stays where the first press sent it. This is why the keeper exists.
    expect(media.currentTime).toBe(9)
  })

  it('three quick steps all count, and the strip reads the asked time before the element lands', () => {
    const { media, keeper } = bench(8.5)
    for (let i = 0; i < 3; i++) keeper.seek(keeper.position() + 0.5)
    expect(keeper.position()).toBe(10)
    media.deliver()
    expect(keeper.position()).toBe(10)
    media.settle()
    expect(media.currentTime).toBe(10)
    expect(keeper.pending()).toBeNull()
    expect(keeper.position()).toBe(10)
  })

  it('steps back count too, and both ways stop at the ends of the media', () => {
    const { media, keeper } = bench(1)
    for (let i = 0; i < 3; i++) keeper.seek(keeper.position() - 0.5)
    media.settle()
    expect(media.currentTime).toBe(0)
    for (let i = 0; i < 2; i++) keeper.seek(keeper.position() + 0.5)
    media.settle()
    expect(media.currentTime).toBe(1)

    keeper.seek(19.2)
    media.settle()
    for (let i = 0; i < 3; i++) keeper.seek(keeper.position() + 0.5)
    expect(keeper.position()).toBe(20)
    media.settle()
    expect(media.currentTime).toBe(20)
    for (let i = 0; i < 3; i++) keeper.seek(keeper.position() - 0.5)
    media.settle()
    expect(media.currentTime).toBe(18.5)
  })

  it("the player's own repeat of a held seek (at 'canplay') is not taken for another control's, so later steps still count", () => {
    const { media, keeper } = bench(19)
    // Two quick presses at the end: the second is held by the player while the element seeks.
    keeper.seek(20)
    keeper.seek(20)
    media.deliver()
    // The seek lands; at 'canplay' the player applies its held time again: a second seek to 20 s.
    media.land()
    expect(media.seeking).toBe(true)
    // Three quick steps back during that repeat.
    for (let i = 0; i < 3; i++) keeper.seek(keeper.position() - 2)
    expect(keeper.position()).toBe(14)
    media.settle()
    expect(media.currentTime).toBe(14)
    expect(keeper.position()).toBe(14)
  })

  it('a seek made elsewhere on the same element (the now-playing strip) wins over a step still on its way', () => {
    const { media, keeper } = bench(8.5)
    keeper.seek(9)
    keeper.seek(9.5)
    media.currentTime = 3
    media.settle()
    expect(keeper.pending()).toBeNull()
    expect(media.currentTime).toBe(3)
  })

  it('an element that will not reach the asked time is asked a few times, then left where it stopped', () => {
    const { media, keeper } = bench(8.5)
    media.snap = true
    keeper.seek(9.5)
    media.settle()
    expect(keeper.pending()).toBeNull()
    expect(media.currentTime).toBe(9)
    // The first ask and three more, not an endless loop.
    expect(media.seeks).toBe(4)
  })
})
