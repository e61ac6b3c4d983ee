import type { Role } from '../utils/roles'

declare module '#auth-utils' {
  interface User {
    id: number
    email: string
    name: string
    role: Role
    organisationId: number
    organisationName: string
    /** A funder's own organisation (from the programme's list of funders), null for everyone else. */
    affiliationName?: string | null
  }

  interface UserSession {
    signedInAt: string
  }

  // Server-only part of the sealed cookie: the user's session version at sign-in (see requireRole).
  interface SecureSessionData {
    sessionVersion: number
  }
}

export {}
