import type { Role } from '@shared/permissions'

declare global {
  namespace Express {
    interface User {
      id: number
      email: string
      name: string
      role: Role
    }
  }
}

declare module 'express-session' {
  interface SessionData {
    passport?: { user?: number }
  }
}

export {}
