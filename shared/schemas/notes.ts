// Listening notes (the bench's comments): the trade outcomes a note can carry.
// Kept apart from library.ts so the takes query can name them without a cycle.
import { z } from 'zod'

/** What the listener decided about the take at that moment. */
export const NOTE_OUTCOMES = ['keep', 'trim', 're-take', 'reject'] as const
export const NoteOutcome = z.enum(NOTE_OUTCOMES, { error: `An outcome is one of ${NOTE_OUTCOMES.join(', ')}` })
export type NoteOutcome = z.infer<typeof NoteOutcome>
