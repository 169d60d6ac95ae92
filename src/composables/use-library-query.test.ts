import { describe, expect, it } from 'vitest'
import { emptyListText, matchCountText } from './use-library-query'

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

describe('emptyListText', () => {
  it('points words alone at their spelling, words with filters at both, filters alone at the ranges', () => {
    expect(emptyListText({ q: ' zzqx ', sort: 'title', page: '2' })).toBe(
      'No take has words beginning with “zzqx”. Check the spelling, or search for fewer words.',
    )
    expect(emptyListText({ q: 'whine', tag: ['loud'] })).toBe(
      'No take has words beginning with “whine” and passes the filters. Clear a filter, or search for fewer words.',
    )
    expect(emptyListText({ minLufs: '-10' })).toBe('No take matches these filters. Widen a range or clear a filter.')
    expect(emptyListText({ order: 'desc' })).toBe('No take matches these filters. Widen a range or clear a filter.')
  })
})
