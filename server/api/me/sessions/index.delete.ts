import { ROLES } from '#shared/utils/roles'

// "Sign out everywhere": every session of the caller ends, this one included.
export default defineRoleHandler(ROLES, async (event, user) => {
  const ended = await revokeSessionsOf(user.id, 'ended_by_user')
  await audit(event, user, { action: 'session.ended_all', entityType: 'user', entityId: user.id, details: { ended } })
  await clearUserSession(event)
  return { ended }
})
