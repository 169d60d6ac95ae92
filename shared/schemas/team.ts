import { z } from 'zod'
import { Email, NameText, Password } from './common'
import { Role } from './auth'

export const TeamMember = z.object({
  id: z.number().int(),
  email: z.string(),
  name: z.string(),
  role: Role,
  active: z.boolean(),
  createdAt: z.string(),
  lastLoginAt: z.string().nullable(),
})
export type TeamMember = z.infer<typeof TeamMember>

export const UpdateUserBody = z
  .object({ role: Role.optional(), active: z.boolean().optional() })
  .refine((b) => b.role !== undefined || b.active !== undefined, 'Send role or active')
export type UpdateUserBody = z.infer<typeof UpdateUserBody>

export const CreateInvitationBody = z.object({ email: Email, role: Role })
export type CreateInvitationBody = z.infer<typeof CreateInvitationBody>

export const Invitation = z.object({
  id: z.number().int(),
  email: z.string(),
  role: Role,
  createdAt: z.string(),
  expiresAt: z.string(),
  acceptedAt: z.string().nullable(),
})
export type Invitation = z.infer<typeof Invitation>

export const AcceptInvitationBody = z.object({ name: NameText(120, 'Enter your name'), password: Password })
export type AcceptInvitationBody = z.infer<typeof AcceptInvitationBody>

export const OutboxMessage = z.object({
  id: z.number().int(),
  from: z.string(),
  to: z.string(),
  subject: z.string(),
  text: z.string(),
  html: z.string().nullable(),
  receivedAt: z.string(),
})
export type OutboxMessage = z.infer<typeof OutboxMessage>
