// Seeks on the field strip count from where the person last asked, not from
// where the media element happens to be.
//
// A seek is asynchronous: the element keeps its old time until it lands. And
// wavesurfer.js (8.0, Player.setTime) holds a seek back while the element is
// short of data (readyState below HAVE_FUTURE_DATA, which it is right after
// every seek) and then drops the held one when the earlier seek's 'seeking'
// event reports a different time. Quick arrow presses were lost that way:
// each read the old time, or its seek was thrown away. So the asked time is
// kept until the element has landed there, asked again if it landed elsewhere,
// and every nudge adds to it.

/** The part of an HTMLMediaElement the keeper reads. */
export interface SeekMedia extends EventTarget {
  readonly currentTime: number
  readonly seeking: boolean
  readonly duration: number
}

export interface SeekKeeper {
  /** Ask for a time; it stays the strip's position until the element lands there. */
  seek: (t: number) => void
  /** The time asked for and not yet landed, else where the player is. */
  position: () => number
  /** The time asked for and not yet landed. */
  pending: () => number | null
  stop: () => void
}

/** Seconds within which the element's time counts as the one asked for (the player's own tolerance). */
const NEAR = 0.01
/** Times the same ask is repeated before the keeper accepts where the element stopped. */
const MAX_RETRIES = 3
/** Times remembered as ours: more than quick presses can queue up while one seek runs. */
const RECENT = 32

export function keepSeeks(
  media: SeekMedia,
  player: { setTime: (t: number) => void; position: () => number },
): SeekKeeper {
  let asked: number | null = null
  // The last times handed to the player, landed or not: a 'seeking' to one of them is
  // ours, to anything else another control moved the media. Kept past a landing, because
  // the player repeats a held seek at 'canplay', after the first one has landed.
  const recent: number[] = []
  let retries = 0
  const near = (a: number, b: number) => Math.abs(a - b) <= NEAR
  const forget = () => {
    asked = null
  }
  const send = (t: number) => {
    recent.push(t)
    if (recent.length > RECENT) recent.shift()
    player.setTime(t)
  }

  const onSeeking = () => {
    if (asked !== null && !recent.some((t) => near(t, media.currentTime))) forget()
  }
  const onEmptied = () => {
    forget()
    recent.length = 0
  }
  const onSeeked = () => {
    if (asked === null || media.seeking) return
    if (near(media.currentTime, asked) || retries >= MAX_RETRIES) return forget()
    retries += 1
    send(asked)
  }
  media.addEventListener('seeking', onSeeking)
  media.addEventListener('seeked', onSeeked)
  media.addEventListener('emptied', onEmptied)
  media.addEventListener('error', forget)

  return {
    seek(t) {
      // The element clamps to its own duration, which may differ from the peaks' by a few ms.
      const end = Number.isFinite(media.duration) && media.duration > 0 ? media.duration : Infinity
      asked = Math.max(0, Math.min(t, end))
      retries = 0
      send(asked)
    },
    position: () => asked ?? player.position(),
    pending: () => asked,
    stop() {
      media.removeEventListener('seeking', onSeeking)
      media.removeEventListener('seeked', onSeeked)
      media.removeEventListener('emptied', onEmptied)
      media.removeEventListener('error', forget)
      onEmptied()
    },
  }
}
