import { z } from 'zod'
import { ROLES } from '../roles'

const page = z.coerce.number().int().min(1).max(100_000).default(1)
const pageSize = z.coerce.number().int().min(5).max(100).default(25)

export const peopleQuerySchema = z.object({
  search: z.string().trim().max(100).optional(),
  role: z.enum(ROLES).optional(),
  status: z.enum(['active', 'inactive']).optional(),
  page,
  pageSize
})
export type PeopleQuery = z.infer<typeof peopleQuerySchema>

export const auditQuerySchema = z.object({
  action: z.string().trim().max(64).optional(),
  actor: z.string().trim().max(254).optional(),
  page,
  pageSize
})
export type AuditQuery = z.infer<typeof auditQuerySchema>
