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
  /** False until an invitation is accepted. */
  hasPassword: boolean
  /** The latest invitation link still open (unused, not replaced), expired or not. */
  invitation: { expiresAt: string, expired: boolean } | null
  /** The latest message about this person (invitation, reset), with its delivery state. */
  mail: MailState | null
  /** Sessions not yet ended (signed-in browsers and tablets). */
  openSessions: number
}

export interface MailState {
  id: number
  kind: string
  status: 'queued' | 'sent' | 'failed'
  attempts: number
  lastError: string | null
  nextAttemptAt: string | null
  sentAt: string | null
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
  /** The action in words ("Changed a role"). */
  actionLabel: string
  /** The record in words: its type and name ("Person · Amina Otieno"), or null when the entry has none. */
  recordLabel: string | null
  /** The details as lines to read: old → new role, old → new answers of a correction, the reason. */
  lines: string[]
}
