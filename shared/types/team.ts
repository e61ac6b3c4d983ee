import type { Role } from '../utils/roles'

export interface InvitationAnswer {
  userId: number
  email: string
  role: Role
  expiresAt: string
  /** True when the address already had a pending invitation, whose link is now void. */
  reinvited: boolean
}

export interface TokenCheckAnswer {
  purpose: 'invitation' | 'reset'
  email: string
  name: string
  organisationName: string
}

export interface SettingsView {
  name: string
  defaultClusterVariable: string
  minVisitsForFunders: number
  funderOrganisations: Array<{ name: string, emailDomain: string }>
}

export interface OutboxItem {
  id: string
  receivedAt: string
  from: string | null
  to: string[]
  subject: string
  text: string
}

export interface OutboxAnswer {
  enabled: boolean
  reason?: string
  items: OutboxItem[]
}
