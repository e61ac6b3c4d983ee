import type { EventHandlerRequest, H3Event } from 'h3'
import type { Role } from '#shared/utils/roles'
import { funderOrganisationOf } from '#shared/utils/funders'
import { type Organisation, type User, settingsOf } from '../db/models'

export type SignedInUser = User & { organisation: Organisation }

/**
 * The one gate of every protected route. The session row, the user's role and the active flag are read
 * from the database in one query on each request (see currentSession), never trusted from the cookie, so
 * a revoked session, a deactivated user or a changed role takes effect at once.
 */
export async function requireRole(event: H3Event, roles: readonly Role[]): Promise<SignedInUser> {
  const current = await currentSession(event)
  if (!current) throw await sessionRefusal(event)
  if (!roles.includes(current.user.role)) throw createError({ statusCode: 403, message: 'Your role does not allow this.' })
  return current.user
}

export function sessionUserOf(user: SignedInUser) {
  return {
    id: user.id,
    email: user.email,
    name: user.name,
    role: user.role,
    organisationId: user.organisationId,
    organisationName: user.organisation.name,
    // A funder belongs to a funder organisation of its own (by e-mail domain); the header names that one.
    affiliationName: user.role === 'funder' ? funderOrganisationOf(user.email, settingsOf(user.organisation).funderOrganisations)?.name ?? null : null
  }
}

/** A route open to the given roles only. Every file in server/api uses this or definePublicHandler. */
export function defineRoleHandler<T>(
  roles: readonly Role[],
  handler: (event: H3Event<EventHandlerRequest>, user: SignedInUser) => T | Promise<T>
) {
  return defineEventHandler(async (event) => {
    const user = await requireRole(event, roles)
    return handler(event, user)
  })
}

/** A route anyone may call (sign-in, health). Kept separate so a forgotten role check is visible. */
export function definePublicHandler<T>(handler: (event: H3Event<EventHandlerRequest>) => T | Promise<T>) {
  return defineEventHandler(handler)
}
