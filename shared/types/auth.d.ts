import type { Role } from '../utils/roles'

declare module '#auth-utils' {
  interface User {
    id: number
    email: string
    name: string
    role: Role
    organisationId: number
    organisationName: string
  }

  interface UserSession {
    signedInAt: string
  }
}

export {}
