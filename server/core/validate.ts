import type { Request } from 'express'
import type { z } from 'zod'

// Parse helpers: every body, query and param goes through a zod schema from
// shared/. A ZodError thrown here becomes 400 VALIDATION_FAILED in the error middleware.
export const body = <T extends z.ZodTypeAny>(req: Request, schema: T): z.infer<T> => schema.parse(req.body ?? {})
export const query = <T extends z.ZodTypeAny>(req: Request, schema: T): z.infer<T> => schema.parse(req.query)
export const params = <T extends z.ZodTypeAny>(req: Request, schema: T): z.infer<T> => schema.parse(req.params)
