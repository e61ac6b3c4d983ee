import { ROLES } from '#shared/utils/roles'

// The caller's open sessions (device, last seen), their own marked.
export default defineRoleHandler(ROLES, async (event, user) => {
  const current = await currentSession(event)
  return { items: await listActiveSessions(user, current?.record.id) }
})
