import { z } from 'zod'
import { ROLES } from '../roles'
import { safeText } from './safe-text'

const page = z.coerce.number().int().min(1).max(100_000).default(1)
const pageSize = z.coerce.number().int().min(5).max(100).default(25)

export const peopleQuerySchema = z.object({
  search: safeText(z.string().trim().max(100)).optional(),
  role: z.enum(ROLES).optional(),
  status: z.enum(['active', 'inactive']).optional(),
  page,
  pageSize
})
export type PeopleQuery = z.infer<typeof peopleQuerySchema>

const day = z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'Use a date as YYYY-MM-DD')
  .refine((value) => {
    const parsed = new Date(`${value}T00:00:00Z`)
    return !Number.isNaN(parsed.getTime()) && parsed.toISOString().startsWith(value)
  }, 'Use a real date as YYYY-MM-DD')
  .optional()

export const auditQuerySchema = z.object({
  action: safeText(z.string().trim().max(64)).optional(),
  actor: safeText(z.string().trim().max(254)).optional(),
  /** What a person types: words found in who did it, the action's words or the record's type and name (any case). */
  q: safeText(z.string().trim().max(100)).optional(),
  entity: safeText(z.string().trim().max(64)).optional(),
  from: day,
  to: day,
  page,
  pageSize
})
export type AuditQuery = z.infer<typeof auditQuerySchema>
