// The @-picker's text handling, held against the mention rule of
// shared/schemas/library.ts (mentionHandles): what the picker writes must be
// read back as a mention of the chosen member.
import { describe, expect, it } from 'vitest'
import { mentionHandles, resolveMentions } from '@shared/schemas/library'
import { activeMention, insertMention, matchMembers } from './use-mentions'

const team = [
  { id: 1, name: 'Ada Quillfeather', email: 'admin@example.test' },
  { id: 2, name: 'Rory Coilwright', email: 'recordist@example.test' },
  { id: 3, name: 'Dana Humbucker', email: 'designer@example.test' },
  { id: 4, name: 'Zoë Ørsted-Lind', email: 'zoe@example.test' },
]

describe('activeMention', () => {
  it('finds the "@query" the caret ends, at the start or after a space or bracket', () => {
    expect(activeMention('@da', 3)).toEqual({ start: 0, query: 'da' })
    expect(activeMention('hear this (@', 12)).toEqual({ start: 11, query: '' })
    expect(activeMention('ask @Dana.Hum', 13)).toEqual({ start: 4, query: 'Dana.Hum' })
  })
  it('ignores e-mail addresses, finished mentions and a caret elsewhere', () => {
    expect(activeMention('mail dana@exa', 13)).toBeNull()
    expect(activeMention('@dana and more', 14)).toBeNull()
    expect(activeMention('@dana', 0)).toBeNull()
  })
})

describe('insertMention', () => {
  it('writes "@Handle " in place of the query, and the rule reads it back as that member', () => {
    const { text, caret } = insertMention('loud at 0:12, @da listen', 14, 17, 'Dana.Humbucker')
    expect(text).toBe('loud at 0:12, @Dana.Humbucker listen')
    expect(caret).toBe('loud at 0:12, @Dana.Humbucker '.length)
    expect(mentionHandles(text).map((h) => h.handle)).toEqual(['Dana.Humbucker'])
    expect(resolveMentions(text, team).map((m) => m.id)).toEqual([3])
  })
  it('a handle made from a name with accents and a hyphen still names its member', () => {
    const { text } = insertMention('@zo', 0, 3, 'Zoë.Ørsted.Lind')
    expect(resolveMentions(text, team).map((m) => m.id)).toEqual([4])
  })
})

describe('matchMembers', () => {
  it('matches any word of the name from its start, accents and case ignored, then anywhere', () => {
    expect(matchMembers(team, 'hum').map((m) => m.id)).toEqual([3])
    expect(matchMembers(team, 'ZOE').map((m) => m.id)).toEqual([4])
    // Ø is a letter of its own (it does not decompose to O), as in the server's rule.
    expect(matchMembers(team, 'ør').map((m) => m.id)).toEqual([4])
    expect(matchMembers(team, 'ors')).toEqual([])
    expect(matchMembers(team, 'r').map((m) => m.id)).toEqual([2, 1, 3, 4])
    expect(matchMembers(team, '').length).toBe(4)
    expect(matchMembers(team, 'nobody')).toEqual([])
  })
})
