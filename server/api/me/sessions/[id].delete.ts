import { z } from 'zod'
import { ROLES } from '#shared/utils/roles'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// Ends one of the caller's own sessions (a browser left signed in elsewhere).
export default defineRoleHandler(ROLES, async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  await revokeOwnSession(user.id, id)
  await audit(event, user, { action: 'session.ended', entityType: 'session', entityId: id })
  return { ended: 1 }
})
