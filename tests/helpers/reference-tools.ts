// The Debian reference tools the measurement engine is checked against:
// ffmpeg's ebur128 filter (ITU-R BS.1770 / EBU R 128 meter) and sox's stats
// effect. Both also generate the test signals, so neither the signals nor the
// expected values come from this project's code.
import { execFileSync } from 'node:child_process'
import { join } from 'node:path'

export interface Ebur128Summary {
  integratedLufs: number
  loudnessRangeLu: number
  truePeakDbtp: number
}

/** Runs `ffmpeg -af ebur128=peak=true` and parses the "Summary:" block it prints on stderr. */
export function ffmpegEbur128(path: string): Ebur128Summary {
  const args = ['-nostats', '-hide_banner', '-i', path, '-af', 'ebur128=peak=true:framelog=verbose', '-f', 'null', '-']
  // ffmpeg writes its log to stderr; execFileSync returns only stdout, so send stderr to stdout.
  const out = execFileSync('sh', ['-c', 'ffmpeg "$@" 2>&1', 'ffmpeg', ...args], {
    encoding: 'utf8',
    maxBuffer: 1 << 26,
  })
  const summary = out.slice(out.lastIndexOf('Summary:'))
  const num = (label: string) => {
    const m = new RegExp(`${label}\\s+(-?[0-9.]+|-inf)`).exec(summary)
    if (!m) throw new Error(`ffmpeg summary has no ${label}\n${summary}`)
    return Number(m[1])
  }
  return { integratedLufs: num('I:'), loudnessRangeLu: num('LRA:'), truePeakDbtp: num('Peak:') }
}

export interface SoxStatsColumn {
  dcOffset: number
  peakDb: number
  rmsDb: number
}

/** `sox FILE -n stats`: the Overall column first, then one per channel (mono prints only one). */
export function soxStats(path: string): SoxStatsColumn[] {
  const out = execFileSync('sh', ['-c', 'sox "$1" -n stats 2>&1', 'sox', path], { encoding: 'utf8' })
  const row = (label: string) => {
    const line = out.split('\n').find((l) => l.startsWith(label))
    if (!line) throw new Error(`sox stats has no "${label}" row\n${out}`)
    return line.slice(label.length).trim().split(/\s+/).map(Number)
  }
  const dc = row('DC offset')
  const pk = row('Pk lev dB')
  const rms = row('RMS lev dB')
  return dc.map((d, i) => ({ dcOffset: d, peakDb: pk[i], rmsDb: rms[i] }))
}

/** sox in its repeatable mode (-R: fixed seeds for noise and dither), so a test signal is the same on every run. */
export function sox(args: string[]): void {
  execFileSync('sox', ['-R', ...args], { stdio: ['ignore', 'ignore', 'pipe'] })
}

export function ffmpeg(args: string[]): void {
  execFileSync('ffmpeg', ['-nostats', '-hide_banner', '-loglevel', 'error', '-y', ...args], {
    stdio: ['ignore', 'ignore', 'pipe'],
  })
}

/** Test signals made by sox and ffmpeg themselves: several rates, depths and channel counts. */
const GENERATORS: { name: string; make: (out: string, tmp: (name: string) => string) => void }[] = [
  {
    name: 'white noise, 44.1 kHz 16-bit mono (sox)',
    make: (o) => sox(['-n', '-r', '44100', '-b', '16', '-c', '1', o, 'synth', '12', 'whitenoise', 'vol', '-14dB']),
  },
  {
    name: 'pink noise with DC shift, 48 kHz 24-bit stereo (sox)',
    make: (o) =>
      sox([
        '-n',
        '-r',
        '48000',
        '-b',
        '24',
        '-c',
        '2',
        o,
        'synth',
        '15',
        'pinknoise',
        'vol',
        '-18dB',
        'dcshift',
        '0.02',
      ]),
  },
  {
    name: '997 Hz sine, 96 kHz float mono (sox)',
    make: (o) =>
      sox([
        '-n',
        '-r',
        '96000',
        '-e',
        'floating-point',
        '-b',
        '32',
        '-c',
        '1',
        o,
        'synth',
        '8',
        'sine',
        '997',
        'vol',
        '-20dB',
      ]),
  },
  {
    name: 'level-stepped 440 Hz bursts, 48 kHz 24-bit stereo (ffmpeg aevalsrc)',
    make: (o) =>
      ffmpeg([
        '-f',
        'lavfi',
        '-i',
        'aevalsrc=sin(2*PI*440*t)*(0.05+0.45*mod(floor(t/4)\\,2)):s=48000:d=24',
        '-ac',
        '2',
        '-c:a',
        'pcm_s24le',
        o,
      ]),
  },
  {
    name: 'pink noise, 44.1 kHz float stereo (ffmpeg anoisesrc)',
    make: (o) =>
      ffmpeg([
        '-f',
        'lavfi',
        '-i',
        'anoisesrc=color=pink:amplitude=0.25:sample_rate=44100:duration=12:seed=7',
        '-ac',
        '2',
        '-c:a',
        'pcm_f32le',
        o,
      ]),
  },
  {
    name: '3 kHz tone with gaps, 96 kHz 16-bit stereo (ffmpeg sine + volume)',
    make: (o) =>
      ffmpeg([
        '-f',
        'lavfi',
        '-i',
        'sine=frequency=3000:sample_rate=96000:duration=10',
        '-af',
        "volume='if(lt(mod(t,2),1.5),0.4,0)':eval=frame",
        '-ac',
        '2',
        '-c:a',
        'pcm_s16le',
        o,
      ]),
  },
  {
    name: 'brown noise then tone, 48 kHz 16-bit mono (sox)',
    make: (o, tmp) => {
      sox(['-n', '-r', '48000', '-b', '16', '-c', '1', tmp('a.wav'), 'synth', '6', 'brownnoise', 'vol', '-12dB'])
      sox(['-n', '-r', '48000', '-b', '16', '-c', '1', tmp('b.wav'), 'synth', '6', 'sine', '200', 'vol', '-30dB'])
      sox([tmp('a.wav'), tmp('b.wav'), o])
    },
  },
]

export const REFERENCE_SIGNALS = GENERATORS.map((g) => g.name)

/** Writes every reference signal into dir; returns them in REFERENCE_SIGNALS order. */
export function generateReferenceSignals(dir: string): { name: string; file: string }[] {
  const tmp = (name: string) => join(dir, `part-${name}`)
  return GENERATORS.map((g, i) => {
    const file = join(dir, `reference-${i}.wav`)
    g.make(file, tmp)
    return { name: g.name, file }
  })
}
