import { watchEffect, type Ref } from 'vue'
import { evenLevelGainDb, useAuditionStore } from '@/stores/audition'

let context: AudioContext | null = null
const wired = new WeakMap<HTMLMediaElement, { even: GainNode; master: GainNode }>()

/**
 * Routes a media element through Web Audio: even-level gain (which may boost a
 * quiet take above unity, beyond what element.volume allows), then the master
 * volume. Created lazily on the first play, inside the user's gesture.
 */
export function useAudioChain(media: Ref<HTMLMediaElement | null>, levels: Ref<{ integratedLufs: number | null; truePeakDbtp: number | null } | null>) {
  const audition = useAuditionStore()

  function ensure() {
    const el = media.value
    if (!el) return null
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
    apply()
    return nodes
  }

  const gainDb = () => (audition.evenLevel ? evenLevelGainDb(levels.value?.integratedLufs, levels.value?.truePeakDbtp) : 0)

  function apply() {
    // Read the reactive values first so watchEffect tracks them even before wiring.
    const even = 10 ** (gainDb() / 20)
    const master = audition.master
    const nodes = media.value && wired.get(media.value)
    if (!nodes || !context) return
    nodes.even.gain.setTargetAtTime(even, context.currentTime, 0.02)
    nodes.master.gain.setTargetAtTime(master, context.currentTime, 0.02)
  }

  watchEffect(apply)
  return { ensure, gainDb }
}
