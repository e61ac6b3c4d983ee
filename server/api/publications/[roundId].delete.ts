import { z } from 'zod'

const paramsSchema = z.object({ roundId: z.coerce.number().int().positive() })

export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { roundId } = await getValidatedRouterParams(event, validateWith(paramsSchema))
  const withdrawn = await withdrawPublication(event, user, roundId)
  return { id: withdrawn.id, withdrawnAt: withdrawn.withdrawnAt?.toISOString() ?? null }
})
