import { watchEffect, type Ref } from 'vue'
import { evenLevelGainDb, useAuditionStore } from '@/stores/audition'

let context: AudioContext | null = null
const wired = new WeakMap<HTMLMediaElement, { even: GainNode; master: GainNode }>()

/**
 * Routes a media element through Web Audio once: even-level gain (which may
 * boost a quiet take above unity, beyond what element.volume allows), then the
 * master volume. Call it inside the user's gesture (the first play).
 */
export function wireMedia(el: HTMLMediaElement) {
  let nodes = wired.get(el)
  if (!nodes) {
    context ??= new AudioContext()
    const source = context.createMediaElementSource(el)
    const even = context.createGain()
    const master = context.createGain()
    source.connect(even).connect(master).connect(context.destination)
    nodes = { even, master }
    wired.set(el, nodes)
  }
  if (context?.state === 'suspended') void context.resume()
  return nodes
}

/**
 * The chain's input for another source heard as `el` is (the bench's loop
 * audition): the same even-level gain and master volume, in the same context.
 */
export function chainInput(el: HTMLMediaElement): { context: AudioContext; input: AudioNode } {
  const nodes = wireMedia(el)
  return { context: context!, input: nodes.even }
}

/** Sets both gains of a wired element (a short glide, so a change never clicks). */
export function applyGains(el: HTMLMediaElement | null, evenDb: number, master: number) {
  const nodes = el && wired.get(el)
  if (!nodes || !context) return
  nodes.even.gain.setTargetAtTime(10 ** (evenDb / 20), context.currentTime, 0.02)
  nodes.master.gain.setTargetAtTime(master, context.currentTime, 0.02)
}

/**
 * The chain for a page's own media element, following the audition store's
 * master volume and even-level switch. Created lazily on the first play.
 */
export function useAudioChain(
  media: Ref<HTMLMediaElement | null>,
  levels: Ref<{ integratedLufs: number | null; truePeakDbtp: number | null } | null>,
) {
  const audition = useAuditionStore()

  function ensure() {
    const el = media.value
    if (!el) return null
    const nodes = wireMedia(el)
    apply()
    return nodes
  }

  const gainDb = () =>
    audition.evenLevel ? evenLevelGainDb(levels.value?.integratedLufs, levels.value?.truePeakDbtp) : 0

  function apply() {
    // Read the reactive values first so watchEffect tracks them even before wiring.
    const even = gainDb()
    const master = audition.master
    applyGains(media.value, even, master)
  }

  watchEffect(apply)
  return { ensure, gainDb }
}
