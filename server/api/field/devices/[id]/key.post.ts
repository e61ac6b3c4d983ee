import { z } from 'zod'
import { deviceIdSchema } from '#shared/utils/schemas/field-device'

const paramsSchema = z.object({ id: deviceIdSchema })

// Forgotten PIN: the signed-in owner of a tablet that is not revoked gets its escrow key to choose a new PIN.
export default defineRoleHandler(['enumerator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  return releaseEscrowKey(event, user, id)
})
