import { z } from 'zod'
import { ROLES } from '../permissions'
import { Email, Password } from './common'

export const Role = z.enum(ROLES)

export const User = z.object({
  id: z.number().int(),
  email: z.string(),
  name: z.string(),
  role: Role,
})
export type User = z.infer<typeof User>

export const LoginBody = z.object({ email: Email, password: z.string().min(1, 'Enter your password').max(200) })
export type LoginBody = z.infer<typeof LoginBody>

export const MeResponse = z.object({ user: User, demo: z.boolean().optional() })

export const PasswordResetRequest = z.object({ email: Email })
export const PasswordResetBody = z.object({ password: Password })

export const AppInfo = z.object({
  demo: z.boolean(),
  /** Shown on the sign-in page while demo mode is on. */
  demoAccounts: z.array(z.object({ email: z.string(), role: Role })),
  demoPassword: z.string().nullable(),
})
export type AppInfo = z.infer<typeof AppInfo>
