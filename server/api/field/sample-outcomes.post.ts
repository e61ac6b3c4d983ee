import { sampleOutcomesBodySchema } from '#shared/utils/schemas/sample'

// Tablet → server: listed farms not interviewed (refused, nobody at home, moved) with the reason and the replacement.
export default defineRoleHandler(['enumerator'], async (event, user) => {
  const body = await readValidatedBody(event, validateWith(sampleOutcomesBodySchema))
  const answer = await recordSampleOutcomes(user, body.outcomes)
  if (answer.results.every(r => r.status === 'rejected')) setResponseStatus(event, 422)
  return answer
})
