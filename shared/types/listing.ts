import type { Role } from '../utils/roles'

export interface Page<T> {
  items: T[]
  total: number
  page: number
  pageSize: number
}

export interface PersonRow {
  id: number
  name: string
  email: string
  role: Role
  active: boolean
  lastSignInAt: string | null
}

export interface AuditRow {
  id: number
  at: string
  actorEmail: string | null
  action: string
  entityType: string | null
  entityId: string | null
  ip: string | null
  details: Record<string, unknown> | null
}
