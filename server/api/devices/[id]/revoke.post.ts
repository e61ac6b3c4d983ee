import { z } from 'zod'
import { deviceIdSchema } from '#shared/utils/schemas/field-device'

const paramsSchema = z.object({ id: deviceIdSchema })

// An admin withdraws a lost tablet (audited): its key is refused and it erases its local copy at its next contact.
export default defineRoleHandler(['admin'], async (event, admin) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  return revokeDevice(event, admin, id)
})
