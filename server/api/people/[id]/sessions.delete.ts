import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// An admin ends every session of one person of the organisation.
export default defineRoleHandler(['admin'], async (event, admin) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  return endSessionsOf(event, admin, id)
})
