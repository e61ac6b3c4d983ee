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

  // Filled by the server from the session row when the app reads the session (server/plugins/sessions.ts);
  // the cookie itself holds none of it.
  interface UserSession {
    signedInAt?: string
  }

  // The only thing in the sealed cookie: the random token of the session row (see server/utils/sessions.ts).
  interface SecureSessionData {
    token: string
  }
}

export {}
