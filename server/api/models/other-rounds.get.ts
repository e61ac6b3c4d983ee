import { z } from 'zod'

const querySchema = z.object({ roundId: z.coerce.number().int().positive() })

// The organisation's other rounds that a model of this round can take in ("several rounds together").
export default defineRoleHandler(['coordinator'], async (event, user) => {
  const { roundId } = await getValidatedQuery(event, validateWith(querySchema))
  return { rounds: await companionRounds(user.organisationId, roundId) }
})
