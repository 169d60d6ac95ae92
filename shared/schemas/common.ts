import { z } from 'zod'

/** Route parameter `:id` and any integer id in a query. */
export const Id = z.coerce.number().int().positive()
export const IdParams = z.object({ id: Id })
export type IdParams = z.infer<typeof IdParams>

export const TokenParams = z.object({ token: z.string().min(16).max(200) })

/** The one error shape every API answer uses. */
export const ApiErrorBody = z.object({
  error: z.object({
    code: z.string(),
    message: z.string(),
    details: z.record(z.string(), z.unknown()).optional(),
  }),
})
export type ApiErrorBody = z.infer<typeof ApiErrorBody>

export const Email = z.string().trim().toLowerCase().email('Enter a valid e-mail address').max(254)
export const PASSWORD_MIN = 10
export const Password = z
  .string()
  .min(PASSWORD_MIN, `Use at least ${PASSWORD_MIN} characters`)
  .max(200, 'Use at most 200 characters')

export function paged<T extends z.ZodTypeAny>(item: T) {
  return z.object({ items: z.array(item), total: z.number().int(), page: z.number().int(), pageSize: z.number().int() })
}
