import { ROLES } from '#shared/utils/roles'

export default defineRoleHandler(ROLES, async (event, user) => {
  await audit(event, user, { action: 'signout', entityType: 'user', entityId: user.id })
  await clearUserSession(event)
  return { signedOut: true }
})
