import { describe, expect, it } from 'vitest'
import { parseTyped, typedText } from './number-text'

describe('typed numbers', () => {
  it('reads the minus signs and decimal marks people type or paste', () => {
    expect(parseTyped('-20')).toBe(-20)
    expect(parseTyped('\u221223')).toBe(-23)
    expect(parseTyped('\u20139.5')).toBe(-9.5)
    expect(parseTyped(' 12,5 ')).toBe(12.5)
    expect(parseTyped('.5')).toBe(0.5)
    expect(parseTyped('3.')).toBe(3)
  })

  it('tells an empty field from half-typed or wrong text', () => {
    expect(parseTyped('')).toBe('')
    expect(parseTyped('  ')).toBe('')
    expect(parseTyped('-')).toBeNull()
    expect(parseTyped('1e3')).toBeNull()
    expect(parseTyped('loud')).toBeNull()
    expect(typedText(null)).toBe('')
    expect(typedText(-16)).toBe('-16')
  })
})
