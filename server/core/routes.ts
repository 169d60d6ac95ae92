// Every API route is declared through `api.route(...)` with the access it needs.
// The declaration is the enforcement (401/403 before the handler runs) and the
// record: `listRoutes(app)` gives the whole table, which the permission tests
// walk cell by cell.
import express, { type Express, type RequestHandler, type Router } from 'express'
import { can, type Permission } from '@shared/permissions'
import { AppError, forbidden } from './errors'

export type Access = Permission | 'public' | 'signed-in'
export type Method = 'get' | 'post' | 'patch' | 'put' | 'delete'

export interface RouteSpec {
  method: Method
  path: string
  access: Access
}

export interface Api {
  router: Router
  route(method: Method, path: string, access: Access, ...handlers: RequestHandler[]): void
}

export function requireAccess(access: Access): RequestHandler {
  return (req, _res, next) => {
    if (access === 'public') return next()
    if (!req.user) throw new AppError(401, 'UNAUTHENTICATED', 'Sign in first')
    if (access !== 'signed-in' && !can(req.user.role, access)) throw forbidden()
    next()
  }
}

export function createApi(app: Express): Api {
  const router = express.Router()
  const table: RouteSpec[] = []
  app.locals.routes = table
  return {
    router,
    route(method, path, access, ...handlers) {
      table.push({ method, path: `/api${path}`, access })
      router[method](path, requireAccess(access), ...handlers)
    },
  }
}

export function listRoutes(app: Express): RouteSpec[] {
  return [...(app.locals.routes as RouteSpec[])]
}
