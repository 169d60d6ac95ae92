// Shared by tests/render/*.test.ts (not a test file): source signals made by
// Debian's sox and ffmpeg, the renderer called on them, and independent ways to
// read results back (ffmpeg decoding to raw floats, ffprobe, a byte-level chunk walk).
import { execFileSync } from 'node:child_process'
import fs from 'node:fs'
import os from 'node:os'
import path from 'node:path'
import { DEFAULT_RENDER_SETTINGS, type ItemKind, type RenderSettings } from '@shared/schemas/packs'
import { renderItem, type RenderResult } from '../../server/render/render'
import type { ItemMetadata } from '../../server/render/metadata'
import { ffmpeg, sox } from '../helpers/reference-tools'

export const tempDir = (prefix: string) => fs.mkdtempSync(path.join(os.tmpdir(), `strayfield-${prefix}-`))

export { ffmpeg, sox }

export const META: ItemMetadata = {
  title: 'Bench hum',
  description: 'Bench hum. Sources: Doorbell transformer (idle). Tags: hum',
  keywords: ['hum', 'Doorbell transformer'],
  originatorReference: 'SF-TEST-1',
  timeReference: 0,
  createdAt: new Date('2026-11-30T09:15:30Z'),
}

export async function render(
  source: string,
  out: string,
  o: {
    settings?: Partial<RenderSettings>
    kind?: ItemKind
    start?: number | null
    end?: number | null
    metadata?: Partial<ItemMetadata>
  } = {},
): Promise<RenderResult> {
  return renderItem(
    {
      sourcePath: source,
      startSeconds: o.start ?? null,
      endSeconds: o.end ?? null,
      kind: o.kind ?? 'one-shot',
      settings: { ...DEFAULT_RENDER_SETTINGS, ...o.settings },
      metadata: { ...META, ...o.metadata },
      ditherSeed: 7,
    },
    out,
  )
}

/** The file's samples as ffmpeg decodes them (32-bit float, interleaved), and its channel count. */
export function decode(file: string, channels: number): Float32Array[] {
  const raw = execFileSync('ffmpeg', ['-v', 'error', '-i', file, '-f', 'f32le', '-acodec', 'pcm_f32le', '-'], {
    maxBuffer: 1 << 30,
  })
  const all = new Float32Array(raw.buffer, raw.byteOffset, raw.length / 4)
  const frames = all.length / channels
  return Array.from({ length: channels }, (_, c) => {
    const ch = new Float32Array(frames)
    for (let i = 0; i < frames; i++) ch[i] = all[i * channels + c]
    return ch
  })
}

export function mono(channels: Float32Array[]): Float32Array {
  const out = new Float32Array(channels[0].length)
  for (const ch of channels) for (let i = 0; i < out.length; i++) out[i] += ch[i]
  return out
}

export function ffprobe(file: string): { stream: Record<string, string | number>; tags: Record<string, string> } {
  const j = JSON.parse(
    execFileSync('ffprobe', ['-v', 'error', '-show_streams', '-show_format', '-of', 'json', file], {
      encoding: 'utf8',
    }),
  )
  return { stream: j.streams[0], tags: j.format.tags ?? {} }
}

/** Top-level RIFF chunks by walking the bytes (the RIFF layout: id, 32-bit size, payload, pad byte). */
export function chunks(file: string): Map<string, Buffer> {
  const b = fs.readFileSync(file)
  const out = new Map<string, Buffer>()
  for (let p = 12; p + 8 <= b.length;) {
    const id = b.toString('latin1', p, p + 4)
    const size = b.readUInt32LE(p + 4)
    if (!out.has(id)) out.set(id, b.subarray(p + 8, p + 8 + size))
    p += 8 + size + (size & 1)
  }
  return out
}
