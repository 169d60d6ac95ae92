// A curve (natural units, one point every 1/rateHz s) written as the file asked for:
//   csv   time,value in the natural unit (envelope: 0…1 of full scale; centroid, tone: Hz)
//   wav   mono 32-bit float at rateHz, control values mapped onto range; the scale in
//         the bext description
//   midi  Standard MIDI File, format 0: one controller message per point, mapped onto
//         range (controller steps); 1 tick = 1 ms (500 ticks a beat at 120 bpm)
import { writeMidi, type MidiEvent } from 'midi-file'
import type { ModulationBody } from '@shared/schemas/modulation'
import { csvLine } from '../core/csv'
import { encodeWav } from '../audio/wav-writer'
import { controlFraction } from './curves'

/** What the worker is handed: the request, resolved against the take. */
export type ModulationOrder = ModulationBody & {
  startSeconds: number
  endSeconds: number
  /** Names the take in the file's description, e.g. "take 12 (coil-hum.wav)". */
  label: string
}

export interface ModulationFile {
  bytes: Uint8Array
  points: number
  /** csv: FS or Hz; otherwise null. */
  unit: string | null
  /** wav and midi: how control values read (ASCII). */
  scale: string | null
}

const TICKS_PER_BEAT = 500
const MICROSECONDS_PER_BEAT = 500_000 // 120 bpm: 1 tick = 1 ms

const num = (v: number) => String(Number(v.toPrecision(6)))

/** The curve's meaning in words, ASCII only (bext is ASCII, so are headers). */
export function scaleText(o: ModulationOrder): string {
  const { low, high } = o.range
  const span = `${num(low)}..${num(high)}`
  const meaning =
    o.source === 'envelope'
      ? `${o.weighting === 'k' ? 'K-weighted ' : ''}envelope 0..1 of full scale`
      : `${o.source} ${num(o.referenceHz)}..${num(o.referenceHz * 2 ** o.octaves)} Hz, log2(f/${num(o.referenceHz)} Hz)/${num(o.octaves)}`
  const unit = o.format === 'midi' ? `CC${o.controller} ch${o.channel} ` : ''
  const volts = o.volts && o.format === 'wav' ? `; ${span} = ${num(o.volts.low)}..${num(o.volts.high)} V` : ''
  return `${unit}${span} = ${meaning}${volts}`
}

const mapped = (v: number, o: ModulationOrder) =>
  o.range.low + controlFraction(v, o.source, o.referenceHz, o.octaves) * (o.range.high - o.range.low)

export function curveCsv(curve: Float32Array, o: ModulationOrder): ModulationFile {
  const lines = [csvLine(['time', 'value'])]
  const digits = o.source === 'envelope' ? 6 : 3
  for (let k = 0; k < curve.length; k++)
    lines.push(csvLine([Number((k / o.rateHz).toFixed(6)), Number(curve[k].toFixed(digits))]))
  return {
    bytes: Buffer.from(lines.join(''), 'ascii'),
    points: curve.length,
    unit: o.source === 'envelope' ? 'FS' : 'Hz',
    scale: null,
  }
}

export function curveWav(curve: Float32Array, o: ModulationOrder): ModulationFile {
  const scale = scaleText(o)
  const control = Float32Array.from(curve, (v) => mapped(v, o))
  const bytes = encodeWav([control], {
    sampleRate: o.rateHz,
    channels: 1,
    encoding: 'float',
    bitsPerSample: 32,
    controlRate: true,
    bext: {
      description:
        `Modulation ${o.source} of ${o.label}, ${num(o.startSeconds)}-${num(o.endSeconds)} s. Scale: ${scale}`.slice(
          0,
          256,
        ),
      originator: 'Strayfield',
      codingHistory: `A=PCM,F=${o.rateHz},W=32,M=mono,T=control signal\r\n`,
    },
  })
  return { bytes, points: curve.length, unit: null, scale }
}

export function curveMidi(curve: Float32Array, o: ModulationOrder): ModulationFile {
  const scale = scaleText(o)
  const events: MidiEvent[] = [
    { deltaTime: 0, type: 'trackName', text: `Strayfield ${o.source} CC${o.controller}` },
    { deltaTime: 0, type: 'setTempo', microsecondsPerBeat: MICROSECONDS_PER_BEAT },
    { deltaTime: 0, type: 'text', text: `Scale: ${scale}` },
  ]
  let tick = 0
  for (let k = 0; k < curve.length; k++) {
    // Absolute times rounded to the tick, so rates that do not divide 1000 do not drift.
    const at = Math.round((k * 1000) / o.rateHz)
    const value = Math.min(127, Math.max(0, Math.round(mapped(curve[k], o))))
    events.push({
      deltaTime: at - tick,
      type: 'controller',
      channel: o.channel - 1,
      controllerType: o.controller,
      value,
    })
    tick = at
  }
  const end = Math.round((curve.length * 1000) / o.rateHz)
  events.push({ deltaTime: end - tick, type: 'endOfTrack' })
  const bytes = Uint8Array.from(
    writeMidi({ header: { format: 0, numTracks: 1, ticksPerBeat: TICKS_PER_BEAT }, tracks: [events] }),
  )
  return { bytes, points: curve.length, unit: null, scale }
}

export function curveFile(curve: Float32Array, o: ModulationOrder): ModulationFile {
  if (o.format === 'csv') return curveCsv(curve, o)
  if (o.format === 'wav') return curveWav(curve, o)
  return curveMidi(curve, o)
}
