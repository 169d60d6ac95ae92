import { describe, expect, it } from 'vitest'
import { matchCountText } from './use-library-query'

describe('matchCountText', () => {
  it('counts exactly below the cap, singular for one', () => {
    expect(matchCountText(0)).toBe('0 takes')
    expect(matchCountText(1)).toBe('1 take')
    expect(matchCountText(2345)).toBe('2,345 takes')
  })

  it('marks a floor with "+" when the server stopped counting', () => {
    expect(matchCountText(10000, true)).toBe('10,000+ takes')
    expect(matchCountText(1, true)).toBe('1+ takes')
    expect(matchCountText(10000, false)).toBe('10,000 takes')
  })
})
