import { z } from 'zod'

const paramsSchema = z.object({ id: z.coerce.number().int().positive() })

// The round's sample lists with the heads' names, weights and response rates: coordinators only (never funders).
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { id } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  return roundSample(user.organisationId, id)
})
