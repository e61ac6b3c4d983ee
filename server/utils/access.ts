import type { EventHandlerRequest, H3Event } from 'h3'
import type { Role } from '#shared/utils/roles'
import { Organisation, User } from '../db/models'

export type SignedInUser = User & { organisation: Organisation }

/**
 * The one gate of every protected route. The role and the active flag are read from the database on
 * each request, never trusted from the cookie, so a deactivated user or a changed role takes effect at once.
 */
export async function requireRole(event: H3Event, roles: readonly Role[]): Promise<SignedInUser> {
  const session = await getUserSession(event)
  if (!session.user) throw createError({ statusCode: 401, message: 'Sign in to continue.' })
  const user = await User.findByPk(session.user.id, { include: [{ model: Organisation, as: 'organisation' }] }) as SignedInUser | null
  if (!user || !user.active) {
    await clearUserSession(event)
    throw createError({ statusCode: 401, message: 'This account is no longer active. Ask your administrator.', data: { reason: 'deactivated' } })
  }
  // A sealed cookie cannot be revoked, so a password change raises the user's session version instead:
  // every session signed in before it (cookies without a version count as version 0) is refused here.
  if ((session.secure?.sessionVersion ?? 0) !== user.sessionVersion) {
    await clearUserSession(event)
    throw createError({ statusCode: 401, message: 'Your password was changed, so this session has ended. Sign in again.' })
  }
  if (user.role !== session.user.role) {
    // Keep the cookie's copy (used only for navigation) in step with the database.
    await setUserSession(event, { user: sessionUserOf(user), signedInAt: session.signedInAt ?? new Date().toISOString() })
  }
  if (!roles.includes(user.role)) throw createError({ statusCode: 403, message: 'Your role does not allow this.' })
  return user
}

/** Starts (or renews) the caller's session for this user, at the user's current session version. */
export async function startSession(event: H3Event, user: SignedInUser) {
  await replaceUserSession(event, {
    user: sessionUserOf(user),
    signedInAt: new Date().toISOString(),
    secure: { sessionVersion: user.sessionVersion }
  })
}

export function sessionUserOf(user: SignedInUser) {
  return {
    id: user.id,
    email: user.email,
    name: user.name,
    role: user.role,
    organisationId: user.organisationId,
    organisationName: user.organisation.name
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
