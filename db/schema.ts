// One Database interface, built from one interface per table. Rows use the
// database's snake_case; services turn them into camelCase API objects.
import type { Generated, Insertable, Selectable, Updateable } from 'kysely'

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

export interface Database {
  users: UserTable
  sessions: SessionTable
  settings: SettingTable
  invitations: InvitationTable
  password_resets: PasswordResetTable
  mail_messages: MailMessageTable
}
