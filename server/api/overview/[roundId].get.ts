import { z } from 'zod'

const paramsSchema = z.object({ roundId: z.coerce.number().int().positive() })

export default defineRoleHandler(['funder', 'coordinator'], async (event, user) => {
  const { roundId } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  return publishedMap(user, roundId)
})
