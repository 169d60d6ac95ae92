// One Database interface, built from one interface per table. Rows use the
// database's snake_case; services turn them into camelCase API objects.
import type { Generated, Insertable, Selectable, Updateable } from 'kysely'
// Feature tables added later live in their own files and join the Database interface below.
import type { LibraryTables } from './schema-library'
import type { PackTables } from './schema-packs'
import type { RemovalTables } from './schema-removals'
import type { CharacterTables } from './schema-character'

export interface UserTable {
  id: Generated<number>
  email: string
  name: string
  role: string
  password_hash: string
  active: Generated<number>
  created_at: Generated<string>
  last_login_at: string | null
}
export type UserRow = Selectable<UserTable>
export type NewUser = Insertable<UserTable>
export type UserUpdate = Updateable<UserTable>

export interface SessionTable {
  sid: string
  data: string
  expires_at: number
  /** The signed-in user (null: none). */
  user_id: number | null
  /** When the session began (ms since the epoch): its absolute lifetime counts from here. */
  created_at: Generated<number>
}

export interface SettingTable {
  key: string
  value: string
}

export interface InvitationTable {
  id: Generated<number>
  email: string
  role: string
  token_hash: string
  invited_by: number | null
  created_at: string
  expires_at: string
  accepted_at: string | null
}
export type InvitationRow = Selectable<InvitationTable>

export interface PasswordResetTable {
  id: Generated<number>
  user_id: number
  token_hash: string
  created_at: string
  expires_at: string
  used_at: string | null
}

export interface MailMessageTable {
  id: Generated<number>
  message_id: string | null
  from_addr: string
  to_addr: string
  subject: string
  text: string
  html: string | null
  received_at: string
}
export type MailMessageRow = Selectable<MailMessageTable>

export interface SourceTable {
  id: Generated<number>
  name: string
  kind: string
  make_model: string | null
  notes: string | null
  created_by: number | null
  created_at: Generated<string>
}
export type SourceRow = Selectable<SourceTable>

export interface CaptureSessionTable {
  id: Generated<number>
  title: string
  date: string
  location: Generated<string>
  pickup: Generated<string>
  gain_db: number | null
  recorder: Generated<string>
  rig_notes: Generated<string>
  default_source_id: number | null
  default_state: Generated<string>
  created_by: number | null
  created_at: Generated<string>
  updated_at: Generated<string>
}
export type CaptureSessionRow = Selectable<CaptureSessionTable>
export type CaptureSessionUpdate = Updateable<CaptureSessionTable>

export type TakeStatus = 'queued' | 'analyzing' | 'ready' | 'failed'

export interface TakeTable {
  id: Generated<number>
  session_id: number
  uploader_id: number | null
  filename: string
  title: Generated<string>
  description: Generated<string>
  notes: Generated<string>
  audio_path: string
  size_bytes: number
  sha256: string
  status: Generated<TakeStatus>
  progress: Generated<number>
  error: string | null
  format_json: string | null
  analysis_json: string | null
  thumb_json: string | null
  duration_seconds: number | null
  sample_rate: number | null
  channels: number | null
  bits_per_sample: number | null
  integrated_lufs: number | null
  true_peak_dbtp: number | null
  loudness_range_lu: number | null
  sample_peak_dbfs: number | null
  noise_floor_dbfs: number | null
  hum_hz: number | null
  bext_description: Generated<string>
  created_at: Generated<string>
  updated_at: Generated<string>
}
export type TakeRow = Selectable<TakeTable>
export type NewTake = Insertable<TakeTable>
export type TakeUpdate = Updateable<TakeTable>

export interface TakeSourceTable {
  take_id: number
  source_id: number
  state: Generated<string>
}

export interface TakeTagTable {
  take_id: number
  tag: string
}

export interface TakeEventTable {
  id: Generated<number>
  take_id: number
  user_id: number | null
  kind: string
  summary: string
  created_at: Generated<string>
}

export type JobStatus = 'queued' | 'running' | 'done' | 'failed'

export interface JobTable {
  id: Generated<number>
  kind: string
  ref_id: number
  status: Generated<JobStatus>
  error: string | null
  attempts: Generated<number>
  created_at: Generated<string>
  started_at: string | null
  finished_at: string | null
}
export type JobRow = Selectable<JobTable>

export interface Database extends LibraryTables, PackTables, RemovalTables, CharacterTables {
  users: UserTable
  sessions: SessionTable
  settings: SettingTable
  invitations: InvitationTable
  password_resets: PasswordResetTable
  mail_messages: MailMessageTable
  sources: SourceTable
  capture_sessions: CaptureSessionTable
  takes: TakeTable
  take_sources: TakeSourceTable
  take_tags: TakeTagTable
  take_events: TakeEventTable
  jobs: JobTable
  comment_mention_mails: CommentMentionMailTable
}

/** One row per comment and person a mention mail went to: it goes once, whatever the edits. */
export interface CommentMentionMailTable {
  comment_id: number
  user_id: number
}
