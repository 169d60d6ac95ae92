import fs from 'node:fs'
import { describe, expect, it } from 'vitest'
import { SOURCE_KINDS } from '@shared/schemas/sources'
import { FAMILY_LABELS, KIND_FAMILIES, kindColor, kindFamily } from './source-kinds'

describe('source kinds and their colour families', () => {
  it('gives every kind of the shared schema a family, and its own colour variable', () => {
    for (const kind of SOURCE_KINDS) expect(KIND_FAMILIES).toContain(kindFamily(kind))
    expect(kindFamily('power-supply')).toBe('switching')
    expect(kindFamily('mains-wiring')).toBe('mains')
    expect(kindFamily('radio-link')).toBe('radio')
    expect(kindColor('display')).toBe('var(--sf-kind-display)')
    expect(kindFamily('appliance')).toBe('mains')
    expect(kindFamily('vehicle')).toBe('motor')
    expect(kindFamily('camera')).toBe('camera')
    expect(kindFamily('computer')).toBe('radio')
  })

  it('puts a kind it does not know, or none, into "other"', () => {
    expect(kindFamily('theremin-like-oddity')).toBe('other')
    expect(kindFamily(null)).toBe('other')
    expect(kindFamily(undefined)).toBe('other')
    expect(kindFamily('')).toBe('other')
  })

  it('has a label and, in both themes, a colour for every family', () => {
    const tokens = fs.readFileSync(new URL('../../styles/_tokens.scss', import.meta.url), 'utf8')
    const [light, dark] = tokens.split('html.dark')
    for (const f of KIND_FAMILIES) {
      expect(FAMILY_LABELS[f]).toMatch(/^[A-Z]/)
      expect(light).toMatch(new RegExp(`--sf-kind-${f}: #[0-9a-f]{6};`))
      expect(dark).toMatch(new RegExp(`--sf-kind-${f}: #[0-9a-f]{6};`))
    }
  })
})
