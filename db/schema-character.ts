// Tables of take character: suggested character tags and sounds-like features.
import type { Generated } from 'kysely'

/** A character tag the analysis found, with its confidence 0..1 (every tag, suggested or not). */
export interface TakeCharacterTable {
  take_id: number
  tag: string
  confidence: number
}

/** Sounds-like features: float32 little-endian arrays (see server/audio/character.ts). */
export interface TakeFeaturesTable {
  take_id: number
  vector: Buffer
  frame_times: Buffer
  frame_mel: Buffer
  updated_at: Generated<string>
}

export interface CharacterTables {
  take_character: TakeCharacterTable
  take_features: TakeFeaturesTable
}
